"""A voltage output whose output impedance is too high for the load it drives.

What it finds
    A voltage output (``* lintamp: voltage-output NET``, a name matching the
    ``voltage-output`` patterns, or a cell port of that name) that drives an
    identified load -- elements named by ``* lintamp: load ...``, elements whose
    names match the ``load`` patterns (``rload*``, ``cload*`` ...), the parent's
    passive elements on a cell's output port, or a coupling capacitor into a
    passive network to AC ground -- while the driver's output impedance R_out,
    computed with the load elements detached, is too high for it:

    * divider loss ``1 - R_L/(R_L + R_out)`` above ``output-max-loss`` (computed
      exactly as ``1 - |Z(with load)/Z(without)|`` at the band edge), or
    * the pole ``1/(2 pi R_out C_L)`` of a capacitive load below
      ``output-pole-margin`` x the band (R_out there includes any resistive load).

Why it matters
    The gain the stage was designed for is measured unloaded.  A common-source
    or mirror-loaded drain (R_out ~ r_o1 || r_o2, tens of kOhm and up) loses most
    of its signal into a low-ohm load and puts a low pole on a capacitive one.
    A source or emitter follower (1/(g_m+g_mb)), or feedback around the stage
    (R_out/(1 + loop gain)), lowers R_out; the rule computes R_out with every
    feedback path attached, so such outputs pass on their numbers.

    Thresholds, with their defaults (analog-knowledge section 3, common practice):

    * ``output-max-loss`` = 0.10: R_out <= R_L/9 keeps the loaded gain within
      10 % -- the usual "R_out at most a tenth of R_L" rule; precision paths use
      0.01.
    * ``output-pole-margin`` = 3 (x band): designers put the load pole 3-10x
      above the band.  At 3x the response at the band edge is down 5 % (0.46 dB)
      with 18 degrees of phase lag, which already matters; the lower end is the
      default so the rule reports clear problems, set 10 for tight phase budgets.

Example
    ::

        * lintamp: bandwidth 20k
        rd vdd out 10k                 <- common source: R_out = R_D || r_o
        m1 out in 0 0 nch w=10u l=1u
        cc out hp 220u
        rhp hp 0 32                    <- a 32 ohm headphone: almost all the signal is lost

Fix
    Buffer the output: a source follower or emitter follower, a push-pull output
    stage or an op-amp buffer; or close a feedback loop around the stage so that
    R_out is divided by the loop gain; or raise the load impedance.
"""

import math

from lintamp.rulekit.explain_steps import freq_words, looking_into_steps
from lintamp.engine.flat_places import prefix_of
from lintamp.rulekit.impedance_numbers import Numbers, impedance_numbers, safely
from lintamp.rules._numbers import no_numbers_findings
from lintamp.rulekit.ports import port_finder
from lintamp.connectivity.intent import signal_band
from lintamp.config import register_threshold
from lintamp.findings import Related, Severity
from lintamp.engine.engine_kinds import OPEN_OHM
from lintamp.text import si

NAME = "unbuffered-output"
CATEGORY = "impedance"
SEVERITY = Severity.WARNING
SUMMARY = "a voltage output whose output impedance is too high for the load it drives"

MAX_LOSS = register_threshold(
    "output-max-loss", 0.10, "fraction",
    "largest divider loss 1 - R_L/(R_L + R_out) of a voltage output into its load")
POLE_MARGIN = register_threshold(
    "output-pole-margin", 3.0, "x band",
    "the load pole 1/(2 pi R_out C_L) must be at least this many times the band edge")
SPOT_HZ = 1e3  # without a band the divider is judged at 1 kHz, the usual spot frequency



OBSERVED = "testbench: a .print"  # the weakest sign of an output: someone looks at the node


def check(ctx):
    numbers = impedance_numbers(ctx)
    if not isinstance(numbers, Numbers):
        yield from no_numbers_findings(ctx, numbers)
        return
    finder = port_finder(ctx, numbers)
    max_loss = ctx.threshold(MAX_LOSS.name, MAX_LOSS.default)
    margin = ctx.threshold(POLE_MARGIN.name, POLE_MARGIN.default)
    seen = set()
    for port in finder.voltage_outputs():
        key = (id(port.view), port.local)
        if key in seen:
            continue
        finding = safely(_judge, ctx, numbers, finder, port, max_loss, margin)
        if finding is not None:
            seen.add(key)
            yield finding


def _load_caps(finder, port) -> tuple[float, list[str]]:
    total, names = 0.0, []
    for name in port.detach:
        dev = finder.by_name.get(name)
        if dev is None or dev.kind != "capacitor" or not dev.value:
            continue
        a, b = dev.nodes[0], dev.nodes[1]
        other = b if a == port.net else (a if b == port.net else None)
        if other is not None and other in finder.ac_ground:
            total += dev.value
            names.append(name)
    return total, names


def _judge(ctx, numbers, finder, port, max_loss, margin):
    band = signal_band(ctx, port.view, finder.views_of_net(port.net))
    freq_hz = band.hz if band else SPOT_HZ
    c_load, cap_names = _load_caps(finder, port)
    resistive = [n for n in port.detach if n not in cap_names]
    if not finder.has_active_driver(port):
        return None  # a passive network is not a driver whose output could be buffered
    if port.why.startswith(OBSERVED) and not finder.has_active_driver(port, voltage_mode=True):
        return None  # a plotted node that only current sources drive: a current into a sense resistor
    z_out = numbers.z(port.name, freq_hz, port.detach)
    r_out = abs(z_out)
    if r_out >= OPEN_OHM:
        return None  # nothing drives the node at all (the connectivity rules say so)
    values = {"z_ohm": r_out, "freq_hz": freq_hz}
    problems = []
    if resistive:
        z_tot = numbers.z(port.name, freq_hz, cap_names)
        factor = abs(z_tot / z_out) if z_out != 0 else 1.0
        loss = 1 - factor
        y_load = 1 / z_tot - 1 / z_out if z_tot != 0 and z_out != 0 else 0
        load_ohm = abs(1 / y_load) if y_load != 0 else math.inf
        values.update(load_ohm=load_ohm, loss=loss, max_loss=max_loss)
        if loss > max_loss and math.isfinite(load_ohm):
            limit_ohm = load_ohm * max_loss / (1 - max_loss)
            values.update(limit_ohm=limit_ohm, ratio=r_out / load_ohm)
            problems.append((
                f"{port.local} has R_out = {si(r_out, 'Ω')} into a {si(load_ohm, 'Ω')} load: "
                f"{loss * 100:.1f} % of the signal is lost (limit {max_loss * 100:.0f} %)",
                f"divider: R_L/(R_L + R_out) = |Z(with load)/Z(without)| = {factor:.4f}, a loss of "
                f"{loss * 100:.1f} %; limit {max_loss * 100:.0f} % (threshold output-max-loss), i.e. "
                f"R_out <= R_L x {max_loss:g}/(1 - {max_loss:g}) = {si(limit_ohm, 'Ω')}"))
    if c_load > 0 and band:
        r_th = abs(numbers.z(port.name, band.hz, cap_names))
        pole_hz = 1 / (2 * math.pi * r_th * c_load)
        values.update(c_farad=c_load, pole_hz=pole_hz, band_hz=band.hz, margin=margin)
        if pole_hz < margin * band.hz:
            limit_ohm = 1 / (2 * math.pi * margin * band.hz * c_load)
            values.setdefault("limit_ohm", limit_ohm)
            values.setdefault("ratio", pole_hz / band.hz)
            problems.append((
                f"{port.local} drives {si(c_load, 'F')} from {si(r_th, 'Ω')}: the load pole is "
                f"{si(pole_hz, 'Hz')}, below {margin:g} x the {si(band.hz, 'Hz')} band",
                f"load pole: 1/(2 pi x {si(r_th, 'Ω')} x {si(c_load, 'F')}) = {si(pole_hz, 'Hz')}; "
                f"it must reach {margin:g} x {si(band.hz, 'Hz')} (threshold output-pole-margin), i.e. "
                f"R_out <= {si(limit_ohm, 'Ω')}"))
    elif band:
        values["band_hz"] = band.hz
    if not problems:
        return None
    expl = numbers.explain(port.name, freq_hz, port.detach)
    steps = [f"{port.local} is a voltage output: {port.why}",
             "its load: " + port.load_why]
    path = finder.path_words(port.net, toward_output=True)
    if path:
        steps.append(path)
    steps += looking_into_steps(expl, port.local, port.detach)
    steps += [p[1] for p in problems]
    steps.append("band: " + (f"{si(band.hz, 'Hz')} from the {band.source}" if band else
                             f"unknown; the divider is judged at the {si(SPOT_HZ, 'Hz')} spot frequency")
                 + f"; impedances at {freq_words(freq_hz)}")
    steps.append(f"numbers from {numbers.source_words}")
    related = [Related(d.location, f"{d.name}: load") for n in port.detach
               for d in [finder.by_name.get(n)] if d is not None]
    related += [Related(d.location, f"{d.name}: {b.via}") for b in expl.branches[:2]
                for d in [finder.by_name.get(b.elements[0]) if b.elements else None] if d is not None]
    message = problems[0][0] if len(problems) == 1 else problems[0][0] + "; and " + problems[1][0].split(": ", 1)[1]
    return ctx.finding(
        location=port.location, subject=port.local, view=port.view, message=message,
        nets=[port.local], elements=sorted(_relative(e, port) for e in port.detach), explanation=steps,
        values={k: v for k, v in values.items() if not (isinstance(v, float) and math.isinf(v))},
        related=related,
        fix="buffer the output: a source follower or emitter follower (R_out ~ 1/(g_m+g_mb)), a push-pull "
            "stage or an op-amp buffer; or close a feedback loop around the stage (R_out/(1+loop gain)); "
            "or raise the load impedance")


def _relative(flat_name, port):
    """An element's name as seen from the cell the finding points at."""
    prefix = prefix_of(port.name) if not port.view.cell.is_top else ""
    return flat_name[len(prefix):] if prefix and flat_name.startswith(prefix) else flat_name
