"""Run ngspice-39 in batch mode as the reference simulator for engine tests.

The deck given is copied into a fresh temporary folder, a ``.control`` block is
appended that runs ``op`` (and ``ac`` with a 1 A AC probe current source when an
impedance is asked for), and the printed ``name = value`` lines are parsed.
Tests call :func:`require_ngspice` first; it skips with a clear message when
ngspice is not installed.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile

import pytest

NGSPICE = os.environ.get("LINTAMP_NGSPICE", "/usr/bin/ngspice")
_LINE = re.compile(r"^\s*(\S+)\s*=\s*([-+0-9.eE]+)\s*$")


def ngspice_path() -> str | None:
    if os.path.isfile(NGSPICE) and os.access(NGSPICE, os.X_OK):
        return NGSPICE
    return shutil.which("ngspice")


def require_ngspice() -> str:
    path = ngspice_path()
    if path is None:
        pytest.skip("ngspice not installed (reference simulator for these checks); install ngspice-39")
    return path


def _strip_end(netlist: str) -> str:
    lines = netlist.rstrip().splitlines()
    while lines and lines[-1].strip().lower() in (".end", ""):
        lines.pop()
    return "\n".join(lines)


def run_deck(netlist: str, commands: list[str], timeout_s: float = 60.0) -> dict[str, float]:
    """Run ``netlist`` with ``commands`` in a control block; return printed scalars.

    Later prints of the same name overwrite earlier ones, so callers print each
    quantity once per analysis (names carry an analysis tag through ``let``).
    """
    exe = require_ngspice()
    body = _strip_end(netlist)
    deck = body + "\n.control\nset numdgt=12\n" + "\n".join(commands) + "\n.endc\n.end\n"
    with tempfile.TemporaryDirectory(prefix="lintamp-ng-") as tmp:
        path = os.path.join(tmp, "deck.cir")
        with open(path, "w") as fh:
            fh.write(deck)
        proc = subprocess.run(
            [exe, "-b", path], capture_output=True, text=True, timeout=timeout_s, cwd=tmp
        )
    out: dict[str, float] = {}
    for line in proc.stdout.splitlines():
        m = _LINE.match(line)
        if m:
            out[m.group(1).lower()] = float(m.group(2))
    if not out:
        raise RuntimeError(f"ngspice printed no values\nstdout:\n{proc.stdout}\nstderr:\n{proc.stderr}")
    return out


def operating_point(netlist: str, nodes=(), device_params=()) -> dict[str, float]:
    """Node voltages (``v(node)`` keys -> plain node names) and ``@dev[param]`` values.

    ``device_params`` are (device, param) pairs, e.g. ("m1", "gm").
    """
    cmds = ["op"]
    for n in nodes:
        cmds.append(f"print v({n})")
    for dev, par in device_params:
        cmds.append(f"print @{dev}[{par}]")
    raw = run_deck(netlist, cmds)
    out = {}
    for key, val in raw.items():
        if key.startswith("v(") and key.endswith(")"):
            out[key[2:-1]] = val
        else:
            out[key] = val
    return out


def impedance(netlist: str, node: str, freqs_hz=(1.0,)) -> list[complex]:
    """Driving-point impedance at ``node``: 1 A AC current into it, read V(node).

    Any AC stimulus already in the deck must be zero (our test decks have none).
    """
    probe = f"\niprobe_lintamp 0 {node} dc 0 ac 1\n"
    cmds = []
    for k, f in enumerate(freqs_hz):
        cmds += [f"ac lin 1 {f:.12g} {f:.12g}", f"let zr{k} = vr({node})", f"let zi{k} = vi({node})",
                 f"print zr{k}", f"print zi{k}"]
    raw = run_deck(_strip_end(netlist) + probe, cmds)
    return [complex(raw[f"zr{k}"], raw[f"zi{k}"]) for k in range(len(freqs_hz))]


def transfer(netlist: str, from_node: str, to_node: str, freq_hz: float = 1.0) -> complex:
    """V(to_node) per 1 A AC injected at ``from_node``."""
    probe = f"\niprobe_lintamp 0 {from_node} dc 0 ac 1\n"
    cmds = [f"ac lin 1 {freq_hz:.12g} {freq_hz:.12g}", f"let tr = vr({to_node})", f"let ti = vi({to_node})",
            "print tr", "print ti"]
    raw = run_deck(_strip_end(netlist) + probe, cmds)
    return complex(raw["tr"], raw["ti"])
