"""Reader of the raw files ngspice writes (``ngspice -b -r out.raw``), ASCII and binary.

The format (ngspice manual, "rawfile" / ``-r``): a header of ``Key: value`` lines
(``Title``, ``Date``, ``Plotname``, ``Flags``, ``No. Variables``, ``No. Points``),
then ``Variables:`` with one ``index name type`` line per vector, then either
``Values:`` (ASCII: per point, the point index then one number per line; complex
numbers as ``re,im``) or ``Binary:`` followed by native little-endian doubles, point
after point (two doubles per value when ``Flags`` says ``complex``).  A file may hold
several plots one after another.

Only what lintamp needs: every plot's vectors by name, as lists of float or complex.
Malformed input raises :class:`RawFileError`, never anything else.
"""

from __future__ import annotations

import struct
from dataclasses import dataclass, field

MAX_RAW_BYTES = 512 * 1024 * 1024


class RawFileError(ValueError):
    """A raw file that cannot be read (the message says where)."""


@dataclass
class RawPlot:
    title: str = ""
    plotname: str = ""
    flags: str = ""
    names: list[str] = field(default_factory=list)
    kinds: list[str] = field(default_factory=list)
    vectors: dict[str, list] = field(default_factory=dict)  # lower-case name -> values


def _header_line(data: bytes, pos: int) -> tuple[str, int]:
    end = data.find(b"\n", pos)
    if end < 0:
        end = len(data)
    return data[pos:end].decode("latin-1").rstrip("\r"), end + 1


def read_raw(data: bytes, path: str = "<raw file>") -> list[RawPlot]:
    """Every plot of a raw file."""
    if len(data) > MAX_RAW_BYTES:
        raise RawFileError(f"{path}: larger than {MAX_RAW_BYTES} bytes")
    plots: list[RawPlot] = []
    pos = 0
    while pos < len(data):
        if not data[pos:].strip():
            break
        plot, pos = _read_plot(data, pos, path)
        plots.append(plot)
    if not plots:
        raise RawFileError(f"{path}: no plot in the file")
    return plots


def _read_plot(data: bytes, pos: int, path: str) -> tuple[RawPlot, int]:
    plot = RawPlot()
    n_vars = n_points = None
    while True:
        if pos >= len(data):
            raise RawFileError(f"{path}: the header ends before 'Values:' or 'Binary:'")
        line, pos = _header_line(data, pos)
        key, _, value = line.partition(":")
        key = key.strip().lower()
        value = value.strip()
        if key == "title":
            plot.title = value
        elif key == "plotname":
            plot.plotname = value
        elif key == "flags":
            plot.flags = value.lower()
        elif key == "no. variables":
            n_vars = _count(value, path, "No. Variables")
        elif key == "no. points":
            n_points = _count(value, path, "No. Points")
        elif key == "variables":
            if n_vars is None:
                raise RawFileError(f"{path}: 'Variables:' before 'No. Variables:'")
            first = value  # some writers put the first variable on this line
            for k in range(n_vars):
                if k == 0 and first:
                    text = first
                else:
                    if pos >= len(data):
                        raise RawFileError(f"{path}: fewer variables than 'No. Variables' says")
                    text, pos = _header_line(data, pos)
                parts = text.split()
                if len(parts) < 2:
                    raise RawFileError(f"{path}: variable line {text!r} has no name")
                plot.names.append(parts[1])
                plot.kinds.append(parts[2] if len(parts) > 2 else "")
        elif key in ("values", "binary"):
            if n_vars is None or n_points is None or len(plot.names) != n_vars:
                raise RawFileError(f"{path}: '{key}' before the variables are all named")
            complex_values = "complex" in plot.flags
            if key == "binary":
                columns, pos = _binary(data, pos, n_vars, n_points, complex_values, path)
            else:
                columns, pos = _ascii(data, pos, n_vars, n_points, complex_values, path)
            for name, column in zip(plot.names, columns):
                plot.vectors[name.lower()] = column
            return plot, pos
        elif key and not line.startswith((" ", "\t")) and key not in ("date", "command", "option", "dimensions"):
            continue  # other header keys are informational


def _count(value: str, path: str, what: str) -> int:
    try:
        n = int(value.split()[0])
    except (ValueError, IndexError):
        raise RawFileError(f"{path}: '{what}: {value}' is not a count") from None
    if n < 0 or n > 10_000_000:
        raise RawFileError(f"{path}: '{what}: {value}' is out of range")
    return n


def _binary(data, pos, n_vars, n_points, complex_values, path):
    width = 16 if complex_values else 8
    size = width * n_vars * n_points
    if pos + size > len(data):
        raise RawFileError(f"{path}: the binary values are cut short "
                           f"({len(data) - pos} of {size} bytes)")
    flat = struct.unpack_from(f"<{n_vars * n_points * (2 if complex_values else 1)}d", data, pos)
    columns: list[list] = [[] for _ in range(n_vars)]
    step = 2 if complex_values else 1
    k = 0
    for _p in range(n_points):
        for v in range(n_vars):
            columns[v].append(complex(flat[k], flat[k + 1]) if complex_values else flat[k])
            k += step
    return columns, pos + size


def _ascii(data, pos, n_vars, n_points, complex_values, path):
    columns: list[list] = [[] for _ in range(n_vars)]
    tokens: list[str] = []
    needed = n_points * (n_vars + 1)  # each point starts with its index
    while len(tokens) < needed and pos < len(data):
        line, pos = _header_line(data, pos)
        if not line.strip():
            continue
        if not line[:1].isspace() and ":" in line and not line.strip()[0].isdigit() \
                and not line.strip()[0] in "+-.":
            raise RawFileError(f"{path}: fewer values than 'No. Points' says")
        tokens.extend(line.split())
    if len(tokens) < needed:
        raise RawFileError(f"{path}: fewer values than 'No. Points' says")
    k = 0
    for _p in range(n_points):
        k += 1  # the point index
        for v in range(n_vars):
            columns[v].append(_number(tokens[k], complex_values, path))
            k += 1
    return columns, pos


def _number(text: str, complex_values: bool, path: str):
    try:
        if complex_values or "," in text:
            re_text, _, im_text = text.partition(",")
            value = complex(float(re_text), float(im_text or 0.0))
            return value if complex_values else value.real
        return float(text)
    except ValueError:
        raise RawFileError(f"{path}: {text!r} is not a number") from None


def scalar_name(name: str) -> str:
    """A vector name without the ``i(...)`` / ``v(...)`` ngspice puts around some device
    quantities: ``i(@m.x1.m1[id])`` -> ``@m.x1.m1[id]``."""
    low = name.strip().lower()
    if len(low) > 3 and low[1] == "(" and low[0] in "iv" and low.endswith(")") and low[2] == "@":
        return low[2:-1]
    return low
