"""``lintamp audit``: the review sheet of a block (ports, stages, signal paths, findings).

Ports, rails, loads and the band come from :mod:`lintamp.connectivity.intent`, the
one analysis ``check`` and ``impedance`` use too.

Modules: :mod:`.chain` (stage chains), :mod:`.response` (frequency sweeps,
-3 dB search, poles), :mod:`.sheet` (the whole sheet as a JSON-ready dict),
:mod:`.render_text`, :mod:`.render_markdown`, :mod:`.render_html`, :mod:`.plots`
(matplotlib, optional).
"""
