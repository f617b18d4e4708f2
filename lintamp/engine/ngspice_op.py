"""The operating point from the designer's own ngspice (``--op-from ngspice``).

lintamp never hands ngspice the user's file.  It writes a deck of the circuit only:

* the cards lintamp's reader gives (includes and ``.lib`` sections resolved inside the
  usual sandbox, ``.control`` blocks already left out by the reader);
* of the dot cards only those that describe the circuit (:data:`CIRCUIT_CARDS`); every
  analysis, output, measurement, ``.include``/``.lib`` that was not resolved, and any
  card that could run a command or write a file is dropped;
* XSPICE ``A`` elements are dropped too (their code models read and write files);
* ``.op`` and ``.save`` lines of each nonlinear device's small-signal quantities.

It runs ``ngspice -b -r out.raw deck.cir`` in a fresh temporary folder (so no
``.spiceinit`` of the checked repository is read), with standard input closed, a
timeout (the whole process group is killed when it is reached) and an optional
address-space limit, reads the raw file (:mod:`lintamp.engine.raw_file`) and maps
ngspice's flattened names (``@m.x1.m3[gm]``) back to lintamp's (``x1/m3``).  A
transistor inside a PDK wrapper subcircuit that lintamp treats as one device gives its
values to the wrapper instance.

Every failure (ngspice absent, an error, a timeout, a raw file without values) is a
:class:`SimulatorFailed` whose message is the one note the commands print.
"""

from __future__ import annotations

import math
import os
import signal
import subprocess
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

from lintamp.circuit.devicemap import KIND_PINS
from lintamp.circuit.kinds import BJT, MOS, NONLINEAR
from lintamp.engine.op_table import TableEntry

# dot cards that only describe the circuit; every other dot card is left out
CIRCUIT_CARDS = {".model", ".subckt", ".ends", ".param", ".global", ".func", ".temp",
                 ".option", ".options", ".opt", ".if", ".elseif", ".else", ".endif",
                 ".nodeset", ".ic", ".csparam"}
MOS_QUANTITIES = ("id", "vgs", "vds", "vbs", "vth", "vdsat", "gm", "gds", "gmbs", "gmb")
BJT_QUANTITIES = ("ic", "vbe", "vbc", "gm", "gpi", "go", "gmu", "cpi", "cmu")
DIODE_QUANTITIES = ("id", "gd")


class SimulatorFailed(RuntimeError):
    """ngspice could not give an operating point; the message says why, in one line."""


@dataclass
class SimulatorSettings:
    """The ``[simulator]`` config table (and ``--op-from``)."""

    command: str = "ngspice"
    timeout_s: float = 60.0
    memory_bytes: int | None = None
    include_paths: tuple[Path, ...] = ()


class OpTable(dict):
    """A name -> :class:`TableEntry` table that knows where its numbers came from."""

    origin = "table"
    lacked: tuple[str, ...] = ()
    elapsed_s: float = 0.0


@dataclass
class Deck:
    text: str
    dropped: list[str] = field(default_factory=list)  # "path:line:col: .tran" of each card left out


# -- names ------------------------------------------------------------------------

def _find_cell(netlist, name: str):
    name = name.lower()
    for cell in netlist.all_cells():
        if not cell.is_top and cell.name == name:
            return cell
    return None


def _inner_device(netlist, element, device, spec):
    """``(letter, name)`` of the one M/Q/D inside a wrapper instance, wired as the wrapper's
    pins say (drain to the d pin ...), or None."""
    cell = _find_cell(netlist, element.model or "")
    if cell is None or spec is None:
        return None
    inner = [e for e in cell.elements if e.letter in "mqd"]
    if len(inner) != 1:
        return None
    e = inner[0]
    wanted_pins = KIND_PINS.get(device.kind, ())[:3 if e.letter != "d" else 2]
    ports = list(cell.ports)
    for j, pin in enumerate(wanted_pins):
        if pin not in spec.pins or j >= len(e.nodes):
            return None
        k = spec.pins.index(pin)
        if k >= len(ports) or e.nodes[j].lower() != str(ports[k]).lower():
            return None  # drain and source swapped, or an extra element between: not trusted
    return e.letter, e.name.lower()


def ngspice_names(design, netlist, circuit) -> dict[str, tuple[str, str]]:
    """lintamp device name -> (ngspice device name, quantity set) for each nonlinear device."""
    from lintamp.engine.flat_places import locate_device
    out: dict[str, tuple[str, str]] = {}
    for dev in circuit.devices:
        if dev.kind not in NONLINEAR:
            continue
        path = dev.name.split("/")
        _view, design_dev = locate_device(design, dev.name)
        if design_dev is None:
            continue
        element = design_dev.element
        letter = element.letter
        if letter in "mqd":
            inner_letter, inner_path = letter, path
        elif letter == "x":
            found = _inner_device(netlist, element, dev, getattr(design_dev, "spec", None))
            if found is None:
                continue
            inner_letter, inner_path = found[0], [*path, found[1]]
        else:
            continue
        if len(inner_path) == 1:
            name = inner_path[0]
        else:
            name = f"{inner_letter}." + ".".join(inner_path)
        quantities = "mos" if dev.kind in MOS else "bjt" if dev.kind in BJT else "diode"
        out[dev.name] = (name, quantities)
    return out


# -- the deck ---------------------------------------------------------------------

def write_deck(path: Path, read_options, names: dict[str, tuple[str, str]]) -> Deck:
    """The sanitised ``.op`` deck of ``path`` (read with ``read_options``)."""
    from lintamp.netlist.reader import read
    result = read(path, read_options)
    lines = ["* lintamp: the operating point of " + path.name.replace("\n", " ")]
    dropped: list[str] = []
    for card in result.cards:
        text = card.text.strip()
        if not text:
            continue
        word = text.split(None, 1)[0].lower()
        if word == ".end":
            break
        if word.startswith("."):
            if word not in CIRCUIT_CARDS:
                dropped.append(f"{card.location}: {word}")
                continue
        elif word[0] == "a":  # XSPICE code models read and write files
            dropped.append(f"{card.location}: {word}")
            continue
        lines.append(" ".join(text.split()))  # one physical line per card, whatever it held
    saves = []
    for lintamp_name, (ng_name, kind) in names.items():
        wanted = MOS_QUANTITIES if kind == "mos" else BJT_QUANTITIES if kind == "bjt" else DIODE_QUANTITIES
        saves.extend(f"@{ng_name}[{q}]" for q in wanted)
    for k in range(0, len(saves), 8):
        lines.append(".save " + " ".join(saves[k:k + 8]))
    lines += [".op", ".end", ""]
    return Deck("\n".join(lines), dropped)


# -- the run ----------------------------------------------------------------------

def _limits(memory_bytes):
    def apply():  # in the child, before ngspice starts
        if memory_bytes:
            import resource
            resource.setrlimit(resource.RLIMIT_AS, (memory_bytes, memory_bytes))
    return apply


def run_ngspice(deck_text: str, settings: SimulatorSettings) -> bytes:
    """Run the deck; the raw file's bytes.  Raises :class:`SimulatorFailed`."""
    return run_ngspice_with_output(deck_text, settings)[0]


def unrecognized(output: str) -> set[str]:
    """The saved quantities ngspice did not know (it writes a column of zeros for each):
    ``Warning: unrecognized variable - @m.x1.m1[gmb]``."""
    out = set()
    for line in output.splitlines():
        if "unrecognized variable" in line.lower():
            out.add(line.rsplit("-", 1)[-1].strip().lower())
    return out


def run_ngspice_with_output(deck_text: str, settings: SimulatorSettings) -> tuple[bytes, str]:
    """Run the deck; the raw file's bytes and what ngspice printed."""
    import shutil
    exe = shutil.which(settings.command) if os.sep not in settings.command else settings.command
    if not exe or not os.access(exe, os.X_OK):
        raise SimulatorFailed(f"{settings.command} not found")
    with tempfile.TemporaryDirectory(prefix="lintamp-op-") as tmp:
        deck = Path(tmp, "deck.cir")
        deck.write_text(deck_text, encoding="utf-8")
        raw = Path(tmp, "out.raw")
        try:
            proc = subprocess.Popen([exe, "-b", "-r", str(raw), str(deck)], cwd=tmp,
                                    stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                                    stderr=subprocess.STDOUT, start_new_session=True,
                                    preexec_fn=_limits(settings.memory_bytes))
        except OSError as exc:
            raise SimulatorFailed(f"{settings.command} could not be started ({exc.strerror or exc})") from None
        try:
            output, _ = proc.communicate(timeout=settings.timeout_s)
        except subprocess.TimeoutExpired:
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            proc.communicate()
            raise SimulatorFailed(f"{settings.command} did not finish within {settings.timeout_s:g} s; "
                                  "it was stopped") from None
        text = output.decode("utf-8", "replace")
        if not raw.is_file() or raw.stat().st_size == 0:
            raise SimulatorFailed(f"{settings.command} wrote no operating point (exit {proc.returncode}): "
                                  + _first_error(text))
        return raw.read_bytes(), text


def _first_error(text: str) -> str:
    for line in text.splitlines():
        low = line.lower()
        if "error" in low or "fatal" in low or "not found" in low or "unknown" in low:
            return " ".join(line.split())[:300]
    return " ".join(text.split())[-300:] or "no output"


# -- values -----------------------------------------------------------------------

def _region_mos(v: dict[str, float]) -> str:
    vgs, vds, vth, vdsat = (abs(v.get(k, 0.0)) for k in ("vgs", "vds", "vth", "vdsat"))
    if "vgs" in v and "vth" in v and vgs < vth:
        return "subthreshold"  # weak inversion conducts: never "cutoff" from a threshold alone
    if "vdsat" in v and "vds" in v:
        return "saturation" if vds >= vdsat else "triode"
    return "from ngspice"


def table_from_raw(data: bytes, names: dict[str, tuple[str, str]], path: str = "out.raw",
                   unknown: set[str] = frozenset()) -> OpTable:
    """The op table of the devices in ``names`` from an operating-point raw file
    (``unknown``: quantities ngspice said it does not have; their zeros are not values)."""
    from lintamp.engine.raw_file import read_raw, scalar_name
    plots = read_raw(data, path)
    plot = next((p for p in plots if "operating" in p.plotname.lower()), plots[0])
    values: dict[str, float] = {}
    for name, column in plot.vectors.items():
        if column:
            x = column[0]
            x = x.real if isinstance(x, complex) else x
            if math.isfinite(x) and scalar_name(name) not in unknown:
                values[scalar_name(name)] = x
    table = OpTable()
    lacked = []
    for lintamp_name, (ng_name, kind) in names.items():
        got = {q: values[f"@{ng_name}[{q}]"] for q in
               (MOS_QUANTITIES if kind == "mos" else BJT_QUANTITIES if kind == "bjt" else DIODE_QUANTITIES)
               if f"@{ng_name}[{q}]" in values}
        if "gm" not in got and "gd" not in got:
            lacked.append(lintamp_name)
            continue
        entry = TableEntry(name=lintamp_name)
        if kind == "mos":
            gmb = max(abs(got.get("gmbs", 0.0)), abs(got.get("gmb", 0.0)))
            entry.values = {"gm": abs(got.get("gm", 0.0)), "gds": abs(got.get("gds", 0.0)), "gmb": gmb,
                            "ids": abs(got.get("id", 0.0))}
            # magnitudes: a PMOS's V_GS, V_DS and V_DSAT are negative in ngspice
            entry.values.update({k: abs(got[k]) for k in ("vgs", "vds", "vth", "vdsat") if k in got})
            entry.region = _region_mos(got)
        elif kind == "bjt":
            entry.values = {k: abs(got.get(k, 0.0)) for k in ("gm", "gpi", "go", "gmu")}
            entry.values["ic"] = abs(got.get("ic", 0.0))
            # C_pi and C_mu (junction + diffusion) as ngspice's model gives them at this bias
            entry.values.update({t: got[k] for k, t in (("cpi", "cbe"), ("cmu", "cbc"))
                                 if got.get(k, 0.0) > 0})
            if "vbe" in got and "vbc" in got:  # ngspice has V_BE and V_BC; V_CE = V_BE - V_BC
                entry.values["vbe"] = abs(got["vbe"])
                entry.values["vce"] = abs(got["vbe"] - got["vbc"])
            entry.region = "from ngspice"
        else:
            entry.values = {"gd": abs(got.get("gd", 0.0)), "id": got.get("id", 0.0)}
            entry.region = "from ngspice"
        table[lintamp_name] = entry
    table.origin = "ngspice"
    table.lacked = tuple(lacked)
    return table


def operating_point_table(path: Path, design, netlist, circuit, read_options,
                          settings: SimulatorSettings) -> OpTable:
    """Write the deck, run ngspice, read its answer.  Raises :class:`SimulatorFailed`."""
    from lintamp.engine.raw_file import RawFileError
    started = time.monotonic()
    names = ngspice_names(design, netlist, circuit)
    if not names:
        raise SimulatorFailed("no device for ngspice to evaluate")
    deck = write_deck(path, read_options, names)
    raw, output = run_ngspice_with_output(deck.text, settings)
    try:
        table = table_from_raw(raw, names, unknown=unrecognized(output))
    except RawFileError as exc:
        raise SimulatorFailed(f"the raw file ngspice wrote cannot be read: {exc}") from None
    if not table:
        raise SimulatorFailed("ngspice gave no device quantities")
    table.elapsed_s = time.monotonic() - started
    return table


def looks_like_raw(data: bytes) -> bool:
    """Whether an ``--op`` file is an ngspice raw file rather than a CSV/JSON table."""
    head = data[:4096].lstrip().lower()
    return head.startswith(b"title:") and b"plotname:" in head


_KIND_OF_LETTER = {"m": "mos", "q": "bjt", "d": "diode"}


def table_from_designer_raw(data: bytes, path: str = "<raw file>") -> OpTable:
    """The op table in a raw file of the designer's own ngspice run (device quantities saved
    with ``.save @m1[gm] ...``): keyed by lintamp's names, ``@m.x1.m3[gm]`` -> ``x1/m3``, and
    also by the wrapper ``x1`` when ``m3`` is the only device saved inside it."""
    import re
    from lintamp.engine.raw_file import read_raw, scalar_name
    plots = read_raw(data, path)
    plot = next((p for p in plots if "operating" in p.plotname.lower()), plots[0])
    devices: dict[str, tuple[str, str]] = {}
    for name in plot.vectors:
        m = re.fullmatch(r"@([^\[\]]+)\[(\w+)\]", scalar_name(name))
        if m is None:
            continue
        ng_name = m.group(1)
        parts = ng_name.split(".")
        if len(parts) > 1 and len(parts[0]) == 1:  # m.x1.m3: letter, then the path
            letter, path_parts = parts[0], parts[1:]
        else:
            letter, path_parts = ng_name[:1], parts
        kind = _KIND_OF_LETTER.get(letter)
        if kind is None:
            continue
        devices["/".join(path_parts)] = (ng_name, kind)
    # a wrapper instance gets the values of the one device saved inside it
    by_prefix: dict[str, list[str]] = {}
    for full in devices:
        parts = full.split("/")
        for k in range(1, len(parts)):
            by_prefix.setdefault("/".join(parts[:k]), []).append(full)
    names = dict(devices)
    for prefix, inside in by_prefix.items():
        if len(inside) == 1 and prefix not in names:
            names[prefix] = devices[inside[0]]
    table = table_from_raw(data, names, path)
    table.origin = "table"
    if not table:
        from lintamp.engine.raw_file import RawFileError
        raise RawFileError(f"{path}: no device quantities in the raw file (save them in the run, "
                           "e.g. .save @m1[gm] @m1[gds] @m1[gmbs] @m1[id])")
    return table
