"""``lintamp audit``: the review sheet of a block (ports, stages, signal paths, findings).

Note for whoever unifies this later: the port classification (:mod:`.ports`) and
the signal-band choice (:mod:`.band`) live here, small and self-contained, on
purpose.  The impedance rules are getting their own ``lintamp/rulekit/ports.py``
and ``signal_band.py`` on another branch; once both have landed, the audit should
call those and these two modules should go.  The precedence they implement is
the same one INTERFACE.md gives: pragma, then config, then testbench, then name.

Modules: :mod:`.band` (signal band), :mod:`.ports` (inputs and outputs),
:mod:`.paths` (stage chains and interfaces), :mod:`.response` (frequency sweeps,
-3 dB search, poles), :mod:`.sheet` (the whole sheet as a JSON-ready dict),
:mod:`.render_text`, :mod:`.render_markdown`, :mod:`.render_html`, :mod:`.plots`
(matplotlib, optional).
"""
