"""A device that names a model that is not defined.

What it finds
    A diode, BJT, JFET, MOSFET, switch or line that names a ``.model`` no scope
    defines (binned names such as ``nch.1`` count for ``nch``).  It is reported only
    where the files read define some models, or include them: a cell library with
    no models at all is meant to be combined with a PDK's model files, and every
    model is then "unknown" by design.  PSPICE and Xyce digital gates (``U1 AND(2)
    ...``) are not checked: their timing and I/O models come with the simulator.

Why it matters
    A simulator stops.  Without the model, lintamp cannot tell an NMOS from a PMOS
    except by the model's name, and computes no operating point for the device.

Example
    ::

        .model nch nmos level=1 vto=0.5 kp=200u
        M1 d g 0 0 nhc W=2u L=1u

Fix
    Correct the name, or include the model library (``--include-path`` where it
    lives outside the project).
"""


from lintamp.circuit.design import scopes
from lintamp.findings import Severity
from lintamp.netlist.statements import is_digital_primitive
from lintamp.text import excerpt, near_miss

NAME = "unknown-model"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "a device that names a model that is not defined"

_NEEDS_MODEL = {"d", "q", "j", "z", "m", "s", "w", "o", "u"}


def check(ctx):
    netlist = ctx.netlist
    defines_models = any(cell.models for cell in netlist.all_cells())
    if not defines_models:
        return
    incomplete = ctx.options.get("includes_missing", False)
    for view in ctx.cells():
        if not ctx.design.in_deck(view):
            continue  # a library cell: the file that includes it may define the model
        for dev in view.devices_of(letters=_NEEDS_MODEL, with_model=True):
            el = dev.element
            if el.letter not in _NEEDS_MODEL or not el.model or dev.model is not None:
                continue
            if is_digital_primitive(el):
                continue  # its timing and I/O models live in the digital simulator's libraries
            names = [m for scope in scopes(view.cell) for m in scope.models]
            close = [m] if (m := near_miss(el.model, names)) else []
            hint = f"; did you mean '{excerpt(close[0])}'?" if close else ""
            model = excerpt(el.model)
            polarity = f"; its type is guessed as {dev.kind} from the name" if dev.polarity_from == "name" else ""
            yield ctx.finding(
                location=el.location, subject=dev.name, view=view, elements=[dev.name],
                severity=Severity.WARNING if incomplete else None,
                message=f"{excerpt(el.name)} names model '{model}', which no .model defines{hint}",
                explanation=[f"no .model {model} in this cell, its enclosing cells or the top level"
                             + (" (some include files were not found, and it may be defined there)"
                                if incomplete else "") + polarity,
                             "no operating point is computed for this device"],
                fix="correct the model name or include the model library")
