"""A net that carries a signal current into a stage but presents a high impedance.

What it finds
    A current input -- a net declared ``* lintamp: current-input NET``, a net whose
    name matches the ``current-input`` patterns, a node fed by an AC or
    time-varying current source that has capacitance (a sensor or photodiode
    model), or a mirror / common-gate drain feeding the source of another
    common-gate stage -- whose input impedance Z_in is too high.  Z_in is the
    exact small-signal impedance looking into the net at the band edge with the
    signal source and the node's own capacitors detached, so it is the stage's
    input impedance.  With the node capacitance C known (capacitors to AC ground,
    model capacitances) the finding is about the input pole
    ``f_in = 1/(2 pi |Z_in| C)`` falling below ``current-input-pole-margin`` x the
    band; without C (or without a band) about ``|Z_in|`` above
    ``current-input-max-ohm``.

Why it matters
    A current signal wants a low-impedance termination: the current then flows
    into the stage instead of charging the node capacitance.  With a high Z_in the
    input pole sits below the band (bandwidth lost before any gain stage), the
    node swings, and a current source with finite output resistance delivers
    only R_src/(R_src + Z_in) of its current.  The numbers decide, not the
    terminal type: a common-gate source (~1/(g_m+g_mb)) and a shunt-feedback
    virtual ground R_F/(1+A) pass although the latter is a gate; a common-gate
    stage whose drain sees a current-source or cascode load does not, because
    R_in = (R_D + r_o)/(1 + (g_m+g_mb) r_o) grows with R_D (Razavi ch. 3, CG
    section; analog-knowledge 5.3: 10.4 kOhm instead of the naive 1.16 kOhm).

    Thresholds, with their defaults:

    * ``current-input-pole-margin`` = 1.0 (x band): the pole must reach at least
      the band edge -- the requirement R_in <= 1/(2 pi BW C_in) of a
      photodiode/TIA front end (analog-knowledge section 3, Razavi's optical
      receivers TIA chapter).  Raise it (2-3) to keep the input pole out of the
      way of the amplifier's own poles.
    * ``current-input-max-ohm`` = 10 kOhm: used when C or the band is unknown.
      It is the top of the "low ~ 1/g_m" class (1/g_m at the lowest bias
      currents, ~10 uA, of section 3's range); a 1/g_m-class input stays below it,
      a bias resistor or a bare gate does not.

Example
    ::

        * lintamp: bandwidth 100k
        rbias sense vbias 1meg     <- the only DC path: Z_in = 1 MOhm
        m1 out sense 0 0 nch w=10u l=1u
        itouch vdd sense dc 0 ac 1
        ctouch sense 0 5p          <- pole 1/(2 pi 1 MOhm 5 pF) = 31.8 kHz, below the band

Fix
    Terminate the current in a low impedance: a common-gate (common-base) input
    stage, a shunt-feedback transimpedance amplifier (R_in = R_F/(1+A)), or a
    diode-connected mirror input.  For a common-gate stage with a current-source
    or cascode drain load, lower the drain load or boost the input with a
    regulated cascode (R_in ~ 1/(g_m(1+A))).
"""

import math

from lintamp.rulekit.explain_steps import freq_words, looking_into_steps
from lintamp.engine.engine_kinds import OPEN_OHM
from lintamp.engine.flat_places import prefix_of
from lintamp.rulekit.impedance_numbers import Numbers, device_capacitance_at, impedance_numbers, safely
from lintamp.rules._numbers import no_numbers_findings
from lintamp.rulekit.ports import port_finder
from lintamp.connectivity.intent import signal_band
from lintamp.config import register_threshold
from lintamp.findings import Related, Severity
from lintamp.text import si

NAME = "high-z-current-input"
CATEGORY = "impedance"
SEVERITY = Severity.WARNING
SUMMARY = "a current-driven input that presents a high impedance"

POLE_MARGIN = register_threshold(
    "current-input-pole-margin", 1.0, "x band",
    "the input pole 1/(2 pi |Z_in| C) must be at least this many times the band edge")
MAX_OHM = register_threshold(
    "current-input-max-ohm", 10e3, "ohm",
    "highest |Z_in| of a current input when the node capacitance or the band is unknown")


def check(ctx):
    numbers = impedance_numbers(ctx)
    if not isinstance(numbers, Numbers):
        yield from no_numbers_findings(ctx, numbers)
        return
    finder = port_finder(ctx, numbers)
    margin = ctx.threshold(POLE_MARGIN.name, POLE_MARGIN.default)
    max_ohm = ctx.threshold(MAX_OHM.name, MAX_OHM.default)
    seen = set()
    for port in finder.current_inputs():
        key = (id(port.view), port.local)
        if key in seen:
            continue
        finding = safely(_judge, ctx, numbers, finder, port, margin, max_ohm)
        if finding is not None:
            seen.add(key)
            yield finding


def _judge(ctx, numbers, finder, port, margin, max_ohm):
    if not finder.has_active_driver(port, any_terminal=True):
        return None  # a current into a passive network is no stage input
    band = signal_band(ctx, port.view, finder.views_of_net(port.net))
    c_cap, cap_names = finder.net_capacitance_f(port.net)
    c_dev, dev_names = device_capacitance_at(numbers, port.net)
    c_farad = c_cap + c_dev
    detach = sorted(set(port.detach) | set(cap_names))
    freq_hz = band.hz if band else 0.0
    z = numbers.z(port.name, freq_hz, detach)
    z_ohm = abs(z)
    is_open = z_ohm >= OPEN_OHM
    values = {"z_ohm": None if is_open else z_ohm, "freq_hz": freq_hz}
    if band and c_farad > 0:
        limit_ohm = 1 / (2 * math.pi * margin * band.hz * c_farad)
        pole_hz = 0.0 if is_open else 1 / (2 * math.pi * z_ohm * c_farad)
        if pole_hz >= margin * band.hz:
            return None
        values.update(limit_ohm=limit_ohm, pole_hz=pole_hz, band_hz=band.hz, c_farad=c_farad,
                      margin=margin, ratio=pole_hz / band.hz)
        message = (f"{port.local} takes a signal current but sees {_ohm(z_ohm, is_open)}: with "
                   f"{si(c_farad, 'F')} the input pole is {si(pole_hz, 'Hz')}, below "
                   f"{'' if margin == 1 else f'{margin:g} x '}the {si(band.hz, 'Hz')} band "
                   f"(needs |Z_in| <= {si(limit_ohm, 'Ω')})")
        limit_step = (f"limit: the input pole 1/(2 pi |Z_in| C) must reach {margin:g} x the band "
                      f"(threshold current-input-pole-margin), i.e. |Z_in| <= 1/(2 pi x {margin:g} x "
                      f"{si(band.hz, 'Hz')} x {si(c_farad, 'F')}) = {si(limit_ohm, 'Ω')}")
    else:
        limit_ohm = max_ohm
        if z_ohm <= limit_ohm:
            return None
        values.update(limit_ohm=limit_ohm, ratio=(math.inf if is_open else z_ohm / limit_ohm),
                      c_farad=c_farad)
        if band:
            values["band_hz"] = band.hz
        values = {k: v for k, v in values.items() if v is None or math.isfinite(v)}
        message = (f"{port.local} takes a signal current but sees {_ohm(z_ohm, is_open)}, above the "
                   f"{si(limit_ohm, 'Ω')} limit for a current input")
        limit_step = (f"limit: |Z_in| <= {si(limit_ohm, 'Ω')} (threshold current-input-max-ohm; used because "
                      + ("the node capacitance is unknown)" if band else "the signal band is unknown)"))
    expl = numbers.explain(port.name, freq_hz, detach)
    steps = [f"{port.local} is a current input: {port.why}"]
    path = finder.path_words(port.net, toward_output=False)
    if path:
        steps.append(path)
    steps += looking_into_steps(expl, port.local, detach)
    if c_farad > 0:
        parts = [*(f"{n}" for n in cap_names), *(f"model capacitance of {n}" for n in dev_names)]
        steps.append(f"node capacitance C = {si(c_farad, 'F')} ({', '.join(parts)})")
    steps.append(limit_step)
    steps.append("band: " + (f"{si(band.hz, 'Hz')} from the {band.source}" if band else
                             "unknown (no --bandwidth, bandwidth pragma or config bandwidth; the .ac sweep's range is not the band)")
                 + f"; impedance evaluated at {freq_words(freq_hz)}")
    steps.append(f"numbers from {numbers.source_words}")
    related = [Related(d.location, f"{d.name}: {b.via}") for b in expl.branches[:3]
               for d in [finder.by_name.get(b.elements[0]) if b.elements else None] if d is not None]
    return ctx.finding(
        location=port.location, subject=port.local, view=port.view, message=message,
        nets=[port.local], elements=[_relative(e, port) for b in expl.branches[:3] for e in b.elements],
        explanation=steps, values=values, related=related,
        fix="terminate the current in a low impedance: a common-gate/common-base input stage "
            "(R_in ~ 1/(g_m+g_mb)), a shunt-feedback TIA (R_in = R_F/(1+A)) or a diode-connected mirror "
            "input; for a common-gate stage with a current-source or cascode drain load, lower the "
            "drain load or use a regulated cascode (R_in ~ 1/(g_m(1+A)))")


def _ohm(z_ohm, is_open):
    return "an open node (no DC path)" if is_open else si(z_ohm, "Ω")


def _relative(flat_name, port):
    """An element's name as seen from the cell the finding points at."""
    prefix = prefix_of(port.name) if not port.view.cell.is_top else ""
    return flat_name[len(prefix):] if prefix and flat_name.startswith(prefix) else flat_name
