"""A deliberately small SPICE-subset reader for engine tests only.

It turns the same deck text the tests hand to ngspice into a FlatCircuit when
the project's own parser (``lintamp.api.flat_circuit_from_text``) cannot be
imported (on this branch it needs the expression module that lands separately);
whenever the parser imports, :func:`flat_from_text` uses it.  Subset: title line, ``*``
comments, R C L V I E G F H D Q M cards with plain numbers, ``.model`` on one
line, ``dc``/``ac`` source values.  No subcircuits, no expressions.
"""

from __future__ import annotations

import re

from lintamp.circuit.flat import FlatCircuit, FlatDevice, ModelCard, SourceValues
from lintamp.location import Location

_SUFFIX = {"t": 1e12, "g": 1e9, "meg": 1e6, "k": 1e3, "m": 1e-3, "mil": 25.4e-6, "u": 1e-6, "n": 1e-9,
           "p": 1e-12, "f": 1e-15}
_NUM = re.compile(r"^([-+]?(?:\d+\.?\d*|\.\d+)(?:e[-+]?\d+)?)(meg|mil|[tgkmunpf])?[a-z]*$")
_MODEL_KIND = {"nmos": "nmos", "pmos": "pmos", "npn": "npn", "pnp": "pnp", "d": "diode"}


def number(tok: str) -> float:
    m = _NUM.match(tok.lower())
    if not m:
        raise ValueError(f"not a number: {tok!r}")
    return float(m.group(1)) * _SUFFIX.get(m.group(2) or "", 1.0)


def _own_reader(text: str, path: str) -> FlatCircuit:
    circuit = FlatCircuit()
    models: dict[str, ModelCard] = {}
    cards = []
    for lineno, raw in enumerate(text.splitlines()[1:], start=2):
        line = raw.split(";")[0].strip()
        if not line or line.startswith("*"):
            continue
        if line.startswith("+") and cards:
            cards[-1] = (cards[-1][0], cards[-1][1] + " " + line[1:])
            continue
        cards.append((lineno, line))
    for lineno, line in cards:
        toks = line.lower().replace("(", " ").replace(")", " ").replace("=", " = ").split()
        if toks[0] == ".model":
            name, mtype = toks[1], toks[2]
            params, level = {}, 1
            rest = toks[3:]
            for k in range(len(rest)):
                if rest[k] == "=":
                    params[rest[k - 1]] = number(rest[k + 1])
            level = int(params.pop("level", 1))
            models[name] = ModelCard(name=name, type=mtype, params=params, level=level)
    for lineno, line in cards:
        toks = line.lower().replace("=", " = ").split()
        if toks[0].startswith("."):
            continue
        name, letter = toks[0], toks[0][0]
        loc = Location(path, lineno, 1)
        kv = {}
        pos = []
        k = 1
        while k < len(toks):
            if k + 2 < len(toks) + 1 and k + 1 < len(toks) and toks[k + 1] == "=":
                kv[toks[k]] = number(toks[k + 2])
                k += 3
            else:
                pos.append(toks[k])
                k += 1
        net = circuit.net
        if letter in "rcl":
            kind = {"r": "resistor", "c": "capacitor", "l": "inductor"}[letter]
            circuit.add(FlatDevice(name, kind, (net(pos[0]), net(pos[1])), loc, value=number(pos[2])))
        elif letter in "vi":
            src = SourceValues()
            rest = pos[2:]
            j = 0
            while j < len(rest):
                if rest[j] == "dc":
                    src.dc = number(rest[j + 1])
                    j += 2
                elif rest[j] == "ac":
                    src.ac_mag = number(rest[j + 1])
                    j += 2
                else:
                    src.dc = number(rest[j])
                    j += 1
            kind = "vsource" if letter == "v" else "isource"
            circuit.add(FlatDevice(name, kind, (net(pos[0]), net(pos[1])), loc, source=src, value=src.dc))
        elif letter in "eg":
            kind = "vcvs" if letter == "e" else "vccs"
            circuit.add(FlatDevice(name, kind, tuple(net(p) for p in pos[:4]), loc, value=number(pos[4])))
        elif letter in "fh":
            kind = "cccs" if letter == "f" else "ccvs"
            circuit.add(FlatDevice(name, kind, (net(pos[0]), net(pos[1])), loc, value=number(pos[3]),
                                   control=pos[2]))
        elif letter in "dqm":
            count = {"d": 2, "q": 3, "m": 4}[letter]
            nodes = pos[:count]
            model_name = pos[count]
            if letter == "q" and model_name not in models and len(pos) > 4:  # substrate node given
                nodes, model_name = pos[:4], pos[4]
            model = models[model_name]
            params = dict(kv)
            if len(pos) > count + 1 and letter in "dq":
                params["area"] = number(pos[count + 1])
            circuit.add(FlatDevice(name, _MODEL_KIND[model.type], tuple(net(p) for p in nodes), loc,
                                   model=model, params=params))
        else:
            raise ValueError(f"{path}:{lineno}: card {name!r} outside the test subset")
    return circuit


def flat_from_text(text: str, path: str = "<text>") -> FlatCircuit:
    try:
        from lintamp.api import flat_circuit_from_text  # the project parser, once merged
    except ImportError:
        return _own_reader(text, path)
    return flat_circuit_from_text(text, path)
