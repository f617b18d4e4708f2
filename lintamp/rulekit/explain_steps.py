"""Looking-into explanations as the reasoning steps a finding carries.

:func:`lintamp.engine.looking_into.explain_node` gives the exact impedance and
one textbook term per attached branch; this turns it into short sentences with
the numbers, lowest-impedance branch first (the one that sets the node).
"""

from __future__ import annotations


from lintamp.engine.looking_into import NodeExplanation
from lintamp.engine.engine_kinds import is_open
from lintamp.text import si, si_for_key

MAX_BRANCHES = 4


def _ohm(z) -> str:
    return "open" if is_open(z) else si(abs(z), "Ω")


def _terms(terms: dict) -> str:
    shown = []
    for key, value in terms.items():
        if value is None:
            continue
        label = key.rsplit("_", 1)[0] if key.endswith(("_s", "_ohm", "_f")) else key
        shown.append(f"{label} = {si_for_key(key, value) if key.endswith(('_s', '_ohm', '_f')) else f'{value:.3g}'}")
    return ", ".join(shown)


def freq_words(freq_hz: float) -> str:
    return "DC (small signal)" if freq_hz == 0 else si(freq_hz, "Hz")


def looking_into_steps(expl: NodeExplanation, label: str, detached=()) -> list[str]:
    """Sentences: the headline impedance, then each branch's formula with its numbers."""
    head = f"looking into {label} at {freq_words(expl.freq_hz)}: |Z| = {_ohm(expl.z_ohm)} (exact MNA solve)"
    if detached:
        head += "; detached: " + ", ".join(sorted(detached))
    steps = [head]
    for br in expl.branches[:MAX_BRANCHES]:
        line = f"via {br.via}: {br.formula}"
        if br.z_ohm is not None and "open" not in br.formula:
            line += f" = {_ohm(br.z_ohm)}"
        terms = _terms(br.terms)
        only_term = len(br.terms) == 1 and next(iter(br.terms)).rsplit("_", 1)[0] in br.formula
        if terms and not only_term:  # the formula alone already is the number
            line += f" with {terms}"
        if br.note:
            line += f" ({br.note})"
        steps.append(line)
    if len(expl.branches) > MAX_BRANCHES:
        steps.append(f"... and {len(expl.branches) - MAX_BRANCHES} more branch(es) of higher impedance")
    return steps
