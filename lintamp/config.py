"""Project configuration: ``lintamp.toml`` or ``[tool.lintamp]`` in ``pyproject.toml``.

The nearest file up the tree from the starting folder wins; in one folder
``lintamp.toml`` is preferred over ``pyproject.toml``.  Keys are kebab-case.  Every
key, rule name and threshold name is checked, and a mistake is a :class:`ConfigError`
whose text reads ``path: key: what was wrong; what was expected`` (the CLI turns it
into exit code 2).

Example::

    netlists = ["*.sp", "*.cir"]   # the files a folder is checked for
    exclude = ["build/**"]
    only = ["all"]
    skip = ["unused-port"]
    fail-on = "warning"          # error | warning | info | never
    bandwidth = "20meg"
    include-paths = ["models"]

    [severity]
    dangling-net = "error"       # a rule or a whole category

    [paths]                      # what changes for the files a glob matches
    "tb/**" = { skip = ["connectivity"] }

    [devices]
    "acme_nfet_*" = { kind = "nmos", pins = ["d", "g", "s", "b"] }

    [thresholds]
    some-threshold-name = 10.0   # names that rules declare with register_threshold

    rule-paths = ["lint/rules"]  # the repository's own rule modules (Python: they run)

    [ports]                      # net / element name globs for the impedance rules
    voltage-output = ["out", "vout*"]
    current-input = ["iin*"]
    load = ["rload*", "cload*"]

    [simulator]                  # --op-from ngspice (see SimulatorConfig)
    op-from = "ngspice"          # ask for it on every run
    command = "ngspice"          # a program name on PATH, never a path
    timeout = 60                 # seconds
    memory = "2G"                # address-space limit of the ngspice process
    include-paths = ["pdk"]      # folders inside the repository for the deck's includes

Globs
-----
``netlists`` and ``exclude`` and the ``[paths]`` keys are matched against
the file's path relative to the project root, with ``/`` separators.  A pattern
without ``/`` matches the file name alone (``*.sp``) or, for ``exclude``, any folder
name on the way (``build``); ``*`` stays inside one folder, ``**`` spans folders.
``[devices]`` globs match subcircuit names, case-insensitively; the first match wins.
"""

from __future__ import annotations

import hashlib
import json
import re
from dataclasses import dataclass, field, fields, replace
from pathlib import Path, PurePosixPath
from typing import Iterable, Mapping

from lintamp.findings import Severity

CONFIG_FILE = "lintamp.toml"
PYPROJECT_FILE = "pyproject.toml"

DEFAULT_NETLISTS = ("*.sp", "*.spice", "*.cir", "*.net", "*.spi", "*.ckt", "*.cdl")
DEFAULT_EXCLUDE = (".git", ".lintamp_cache")

CATEGORIES = ("syntax", "references", "connectivity", "impedance", "bias", "waivers")
ALL = "all"

# Rules whose findings come from the reader, the parser or the decision layer; they
# may have no rule module of their own, but are valid names everywhere.
BUILTIN_RULE_CATEGORIES: dict[str, str] = {
    "parse-error": "syntax",
    "undefined-param": "syntax",
    "unknown-cell": "references",
    "pin-mismatch": "references",
    "unknown-model": "references",
    "duplicate-name": "references",
    "unused-waiver": "waivers",
    "waiver-without-reason": "waivers",
}

DEVICE_KINDS = ("nmos", "pmos", "npn", "pnp", "diode", "resistor", "capacitor", "inductor")

# Pin roles per device kind: the required ones, then the optional ones.  "-" marks a
# wrapper port that the device model ignores (a dummy or a substrate tap).
_PIN_ROLES: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "nmos": (("d", "g", "s"), ("b",)),
    "pmos": (("d", "g", "s"), ("b",)),
    "npn": (("c", "b", "e"), ("s",)),
    "pnp": (("c", "b", "e"), ("s",)),
    "diode": (("a", "k"), ()),
    "resistor": (("p", "n"), ()),
    "capacitor": (("p", "n"), ()),
    "inductor": (("p", "n"), ()),
}
IGNORED_PIN = "-"

FAIL_ON_CHOICES = ("error", "warning", "info", "never")


class ConfigError(Exception):
    """A configuration the tool cannot use; the text says where, what and what instead.

    Parameters
    ----------
    path : str
        The file (or ``--option``) the problem is in.
    key : str
        The dotted key, ``""`` when the problem is the whole file.
    problem : str
        What was wrong, as a short phrase.
    expected : str
        What was expected instead.
    """

    def __init__(self, path: str, key: str, problem: str, expected: str = ""):
        self.path = str(path)
        self.key = key
        self.problem = problem
        self.expected = expected
        text = f"{self.path}: {key}: {problem}" if key else f"{self.path}: {problem}"
        if expected:
            text += f"; expected {expected}"
        super().__init__(text)


# ---------------------------------------------------------------- thresholds


@dataclass(frozen=True, slots=True)
class ThresholdInfo:
    """A number a rule compares against, declared by the rule, settable in ``[thresholds]``."""

    name: str
    default: float
    unit: str
    doc: str


_THRESHOLDS: dict[str, ThresholdInfo] = {}


def register_threshold(name: str, default: float, unit: str, doc: str) -> ThresholdInfo:
    """Declare a threshold (call at rule-module import time).

    Registering the same name twice with the same default is harmless (a module
    re-imported); a different default is a programming error.
    """
    info = ThresholdInfo(name, float(default), unit, doc)
    known = _THRESHOLDS.get(name)
    if known is not None and known.default != info.default:
        raise ValueError(f"threshold {name!r} registered twice with different defaults")
    _THRESHOLDS[name] = info
    return info


def known_thresholds() -> dict[str, ThresholdInfo]:
    """Every declared threshold by name (import the rules first: they declare them)."""
    return dict(sorted(_THRESHOLDS.items()))


# ---------------------------------------------------------------- devices


@dataclass(frozen=True, slots=True)
class DeviceMapping:
    """A subcircuit name glob that stands for one device, its port roles in order."""

    pattern: str
    kind: str
    pins: tuple[str, ...]
    value: str | None = None  # the instance parameter holding ohm / farad / henry

    def matches(self, subckt_name: str) -> bool:
        return _glob_regex(self.pattern.lower(), whole_name=True).fullmatch(
            subckt_name.lower()) is not None


# ---------------------------------------------------------------- per-path policy

PATH_KEYS = ("skip",)  # the keys of a [paths] entry (room for a per-path severity)


@dataclass(frozen=True, slots=True)
class PathPolicy:
    """What a ``[paths]`` entry changes for the files its glob matches."""

    skip: tuple[str, ...] = ()  # rules or categories not reported there

    def to_json(self) -> dict:
        return {"skip": list(self.skip)}


# ---------------------------------------------------------------- the config


@dataclass(slots=True)
class Config:
    """Everything a run takes from the project configuration (defaults when absent)."""

    root: Path = field(default_factory=Path.cwd)
    source: Path | None = None  # the file read, None for defaults
    netlists: tuple[str, ...] = DEFAULT_NETLISTS
    exclude: tuple[str, ...] = DEFAULT_EXCLUDE
    only: tuple[str, ...] = (ALL,)
    skip: tuple[str, ...] = ()
    fail_on: Severity | None = Severity.WARNING  # None: never fail on findings
    bandwidth: str | None = None
    include_paths: tuple[Path, ...] = ()
    severity: dict[str, Severity] = field(default_factory=dict)
    paths: dict[str, PathPolicy] = field(default_factory=dict)  # root-relative glob -> policy
    devices: tuple[DeviceMapping, ...] = ()
    thresholds: dict[str, float] = field(default_factory=dict)
    ports: dict[str, tuple[str, ...]] = field(default_factory=dict)  # kind -> name globs
    rule_paths: tuple[Path, ...] = ()  # folders of the repository's own rule modules
    simulator: "SimulatorConfig | None" = None  # [simulator]: for --op-from

    # ---- rules

    def rule_enabled(self, rule: str, category: str) -> bool:
        """Whether ``only``/``skip`` keep ``rule``.

        The most specific entry wins (rule name over category over ``all``); at equal
        specificity ``skip`` wins.  A rule no ``only`` entry names is off.
        """
        chosen = _specificity(self.only, rule, category)
        dropped = _specificity(self.skip, rule, category)
        return chosen > 0 and chosen > dropped

    def severity_for(self, rule: str, category: str, default: Severity) -> Severity:
        """The ``[severity]`` override for a rule (its name first, then its category)."""
        if rule in self.severity:
            return self.severity[rule]
        return self.severity.get(category, default)

    def skipped_in_file(self, rule: str, category: str, relpath: str) -> bool:
        """Whether a ``[paths]`` entry's ``skip`` drops ``rule`` for that root-relative path."""
        for pattern, policy in self.paths.items():
            if _specificity(policy.skip, rule, category) and glob_match(pattern, relpath):
                return True
        return False

    # ---- files

    def relative_path(self, path: str | Path) -> str:
        """``path`` relative to the project root, posix; as given when outside it."""
        p = Path(path)
        absolute = p if p.is_absolute() else Path.cwd() / p
        try:
            return absolute.resolve().relative_to(self.root.resolve()).as_posix()
        except (ValueError, OSError):
            return PurePosixPath(*p.parts).as_posix() if not p.is_absolute() else p.as_posix()

    def wants_file(self, path: str | Path) -> bool:
        """Whether folder discovery should check ``path`` (by ``netlists``/``exclude``)."""
        rel = self.relative_path(path)
        parts = rel.split("/")
        for pattern in self.exclude:
            if glob_match(pattern, rel):
                return False
            if "/" not in pattern and any(glob_match(pattern, part) for part in parts[:-1]):
                return False
        return any(glob_match(pattern, rel) for pattern in self.netlists)

    # ---- devices and thresholds

    def device_for(self, subckt_name: str) -> DeviceMapping | None:
        """The first ``[devices]`` entry whose glob matches the subcircuit name."""
        for mapping in self.devices:
            if mapping.matches(subckt_name):
                return mapping
        return None

    def threshold(self, name: str) -> float:
        """The configured value of a declared threshold, else its default.

        Raises ``KeyError`` for a name no rule declared (a bug in the rule).
        """
        info = _THRESHOLDS[name]
        return self.thresholds.get(name, info.default)

    # ---- identity

    def fingerprint(self) -> str:
        """A digest of every setting that can change findings (for the cache key)."""
        data = {
            "only": list(self.only), "skip": list(self.skip),
            "bandwidth": self.bandwidth,
            "include_paths": [str(p) for p in self.include_paths],
            "severity": {k: v.label for k, v in sorted(self.severity.items())},
            "paths": {k: v.to_json() for k, v in sorted(self.paths.items())},
            "devices": [[d.pattern, d.kind, list(d.pins), d.value] for d in self.devices],
            "thresholds": dict(sorted(self.thresholds.items())),
            "ports": {k: list(v) for k, v in sorted(self.ports.items())},
            "rule_paths": [str(p) for p in self.rule_paths],
            "simulator": None if self.simulator is None else self.simulator.to_json(),
            "root": str(self.root),
        }
        text = json.dumps(data, sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _specificity(names: Iterable[str], rule: str, category: str) -> int:
    """3 when ``names`` holds the rule, 2 its category, 1 ``all``, 0 none."""
    best = 0
    for name in names:
        if name == rule:
            return 3
        if category and name == category:
            best = max(best, 2)
        elif name == ALL:
            best = max(best, 1)
    return best


# ---------------------------------------------------------------- globs

_glob_cache: dict[tuple[str, bool], re.Pattern] = {}
LINEAR_GLOB_STARS = 3  # globs with this many stars or more are matched without backtracking


def _glob_regex(pattern: str, *, whole_name: bool = False) -> re.Pattern:
    """Compile a glob: ``*`` within a folder, ``**`` across folders, ``?``, ``[...]``."""
    cached = _glob_cache.get((pattern, whole_name))
    if cached is not None:
        return cached
    out: list[str] = []
    i, n = 0, len(pattern)
    any_char = "." if whole_name else "[^/]"
    while i < n:
        c = pattern[i]
        if c == "*":
            if pattern.startswith("**", i) and not whole_name:
                i += 2
                if i < n and pattern[i] == "/":
                    out.append("(?:.*/)?")  # **/ : zero or more folders
                    i += 1
                else:
                    out.append(".*")
                continue
            out.append(any_char + "*")
        elif c == "?":
            out.append(any_char)
        elif c == "[":
            end = pattern.find("]", i + 2 if pattern[i + 1:i + 2] in ("!", "]") else i + 1)
            if end < 0:
                out.append(re.escape(c))
            else:
                body = pattern[i + 1:end]
                if body.startswith("!"):
                    body = "^" + body[1:]
                out.append("[" + body.replace("\\", "\\\\") + "]")
                i = end
        else:
            out.append(re.escape(c))
        i += 1
    try:
        compiled = re.compile("".join(out), re.DOTALL)
    except re.error as exc:  # a bad class such as [z-a]
        raise GlobError(f"is not a valid glob ({exc.msg})") from None
    if pattern.count("*") >= LINEAR_GLOB_STARS:  # a regular expression would backtrack: *a*a*a*b
        compiled = _LinearGlob(pattern, whole_name)
    _glob_cache[(pattern, whole_name)] = compiled
    return compiled


class GlobError(ValueError):
    """A config glob that cannot be matched (the message says why)."""


class _LinearGlob:
    """A glob matched in O(pattern x text) steps, whatever its stars (the same
    language as :func:`_glob_regex`'s expression, without its backtracking)."""

    def __init__(self, pattern: str, whole_name: bool):
        self.whole_name = whole_name
        self.tokens: list[tuple[str, object]] = []
        i, n = 0, len(pattern)
        while i < n:
            c = pattern[i]
            if c == "*":
                if pattern.startswith("**", i) and not whole_name:
                    i += 2
                    if i < n and pattern[i] == "/":
                        self.tokens.append(("folders", None))
                        i += 1
                    else:
                        self.tokens.append(("any", None))
                    continue
                self.tokens.append(("star", None))
            elif c == "?":
                self.tokens.append(("one", None))
            elif c == "[" and pattern.find("]", i + 2 if pattern[i + 1:i + 2] in ("!", "]") else i + 1) >= 0:
                end = pattern.find("]", i + 2 if pattern[i + 1:i + 2] in ("!", "]") else i + 1)
                body = pattern[i + 1:end]
                if body.startswith("!"):
                    body = "^" + body[1:]
                self.tokens.append(("class", re.compile("[" + body.replace("\\", "\\\\") + "]", re.DOTALL)))
                i = end
            else:
                self.tokens.append(("char", c))
            i += 1

    def fullmatch(self, text: str):
        n = len(text)
        reach = [False] * (n + 1)
        reach[0] = True
        for kind, data in self.tokens:
            new = [False] * (n + 1)
            if kind == "star":
                active = False
                for p in range(n + 1):
                    active = reach[p] or (active and (self.whole_name or text[p - 1] != "/"))
                    new[p] = active
            elif kind in ("any", "folders"):
                first = reach.index(True) if True in reach else n + 1
                for p in range(first, n + 1):
                    new[p] = kind == "any" or reach[p] or (p > first and text[p - 1] == "/")
            else:
                for p in range(n):
                    if reach[p]:
                        ch = text[p]
                        new[p + 1] = (ch == data if kind == "char" else
                                      (self.whole_name or ch != "/") if kind == "one" else
                                      data.fullmatch(ch) is not None)
            reach = new
            if True not in reach:
                return None
        return True if reach[n] else None


def glob_match(pattern: str, relpath: str) -> bool:
    """Match a root-relative posix path; a pattern without ``/`` matches the file name.

    >>> glob_match("*.sp", "blocks/amp.sp"), glob_match("blocks/*.sp", "blocks/sub/a.sp")
    (True, False)
    >>> glob_match("blocks/**/*.sp", "blocks/sub/a.sp"), glob_match("tb/**", "tb/x/y.cir")
    (True, True)
    """
    pattern = pattern.strip().removeprefix("./")
    if "/" not in pattern:
        relpath = relpath.rsplit("/", 1)[-1]
    return _glob_regex(pattern).fullmatch(relpath) is not None


# ---------------------------------------------------------------- finding the file


def find_config(start: Path) -> Path | None:
    """The nearest ``lintamp.toml``, or ``pyproject.toml`` with ``[tool.lintamp]``, upwards.

    A ``pyproject.toml`` without that table is passed over; one that is not valid
    TOML is passed over too (it belongs to other tools, which will complain).
    """
    here = Path(start).resolve()
    if here.is_file():
        here = here.parent
    for folder in (here, *here.parents):
        candidate = folder / CONFIG_FILE
        if candidate.is_file():
            return candidate
        candidate = folder / PYPROJECT_FILE
        if candidate.is_file() and _has_tool_table(candidate):
            return candidate
    return None


def _has_tool_table(pyproject: Path) -> bool:
    import tomllib  # here, not at the top: most runs read no TOML file at all

    try:
        data = tomllib.loads(pyproject.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return False  # another tool's file, nested too deep to parse: not ours
    tool = data.get("tool")
    return isinstance(tool, dict) and "lintamp" in tool


# ---------------------------------------------------------------- loading


def rule_catalog(known_rules: Mapping[str, str] | Iterable[str] | None = None) -> dict[str, str]:
    """Rule name -> category: the registry's rules plus the built-in parser-level ones.

    ``known_rules`` may be given as a mapping (used as is, with the built-in names
    added) or as a set of names (categories looked up where known).
    """
    if isinstance(known_rules, Mapping):
        return {**BUILTIN_RULE_CATEGORIES, **dict(known_rules)}
    from lintamp.registry import all_rules

    registered = {name: info.category for name, info in all_rules().items()}
    catalog = {**BUILTIN_RULE_CATEGORIES, **registered}
    if known_rules is None:
        return catalog
    return {name: catalog.get(name, "") for name in known_rules} | BUILTIN_RULE_CATEGORIES


def load_config(path: Path | None, *, no_config: bool = False, start: Path,
                known_rules: Mapping[str, str] | Iterable[str] | None = None) -> Config:
    """Read the configuration.

    Parameters
    ----------
    path : Path or None
        The file ``--config`` named; None to look upwards from ``start``.
    no_config : bool
        Read no configuration file (``--no-config``): defaults, root = ``start``.
    start : Path
        Where discovery begins (usually the current folder).
    known_rules : mapping or iterable, optional
        Valid rule names (with categories when a mapping); default: the registry's.

    Raises
    ------
    ConfigError
        For a missing or unreadable file, bad TOML, an unknown key, rule or threshold,
        or a value of the wrong shape.
    """
    start = Path(start)
    start_folder = start if start.is_dir() or not start.exists() else start.parent
    if no_config:
        return Config(root=start_folder.resolve())
    if path is None:
        path = find_config(start)
        if path is None:
            return Config(root=start_folder.resolve())
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(str(path), "", "file not found", "an existing lintamp.toml or pyproject.toml") from None
    except (OSError, UnicodeDecodeError) as err:
        raise ConfigError(str(path), "", f"cannot read it ({err})", "a readable UTF-8 TOML file") from None
    import tomllib

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise ConfigError(str(path), "", f"not valid TOML: {err}", "TOML syntax (https://toml.io)") from None
    except RecursionError:
        raise ConfigError(str(path), "", "nested too deeply to read", "a flatter TOML file") from None
    prefix = ""
    if path.name == PYPROJECT_FILE:
        prefix = "tool.lintamp."
        tool = data.get("tool", {})
        data = tool.get("lintamp", {}) if isinstance(tool, dict) else {}
        if not isinstance(data, dict):
            raise ConfigError(str(path), "tool.lintamp", "is not a table", "a [tool.lintamp] table")
    return parse_config(data, source=path, prefix=prefix, known_rules=known_rules)


_TOP_KEYS = ("netlists", "exclude", "only", "skip", "fail-on", "bandwidth", "include-paths",
             "severity", "paths", "devices", "thresholds", "ports", "rule-paths", "simulator")
# Keys of lintamp 0.1.0 and what they are called now: reading one is an error that says so.
RENAMED_KEYS = {"include": "netlists", "select": "only", "ignore": "skip",
                "per-file-ignores": "paths"}
PORT_KINDS = ("voltage-output", "current-input", "voltage-input", "current-output", "load", "supply",
              "ground")


def parse_config(data: dict, *, source: Path, prefix: str = "",
                 known_rules: Mapping[str, str] | Iterable[str] | None = None) -> Config:
    """Validate a parsed TOML table into a :class:`Config` (root = the file's folder)."""
    where = str(source)
    catalog = rule_catalog(known_rules)
    root = source.resolve().parent
    for key in data:
        if key in RENAMED_KEYS:
            new = RENAMED_KEYS[key]
            expected = (f'[{prefix}{new}] with a table per glob, e.g. "tb/**" = {{ skip = ["unused-port"] }}'
                        if new == "paths" else f"{prefix}{new}, its new name")
            raise ConfigError(where, prefix + key, f"is now called {new!r}", expected)
        if key not in _TOP_KEYS:
            hint = key.replace("_", "-")
            expected = (f"the kebab-case spelling {hint!r}" if hint in _TOP_KEYS
                        else "one of " + ", ".join(_TOP_KEYS))
            raise ConfigError(where, prefix + key, "unknown key", expected)
    config = Config(root=root, source=source)
    if "rule-paths" in data:  # first: the rules it loads are valid names in the keys below
        config.rule_paths = _Checker(where, prefix, catalog).rule_paths(data["rule-paths"], "rule-paths", root)
        catalog = {**catalog, **_load_rule_folders(config.rule_paths, where, prefix)}
    check = _Checker(where, prefix, catalog)
    if "netlists" in data:
        config.netlists = check.globs(data["netlists"], "netlists")
    if "exclude" in data:
        config.exclude = check.globs(data["exclude"], "exclude")
    if "only" in data:
        config.only = check.selectors(data["only"], "only")
    if "skip" in data:
        config.skip = check.selectors(data["skip"], "skip")
    if "fail-on" in data:
        config.fail_on = check.fail_on(data["fail-on"], "fail-on")
    if "bandwidth" in data:
        config.bandwidth = check.bandwidth(data["bandwidth"], "bandwidth")
    if "include-paths" in data:
        from lintamp.safe_paths import include_root_inside, repository_of
        try:  # a committed config may not open the sandbox: folders inside the repository only
            config.include_paths = tuple(
                include_root_inside(root, p, repository_of(root))
                for p in check.strings(data["include-paths"], "include-paths"))
        except ValueError as exc:
            raise check.fail("include-paths", str(exc),
                             "folders inside the repository (give others with --include-path)") from None
    if "severity" in data:
        config.severity = check.severity_table(data["severity"], "severity")
    if "paths" in data:
        config.paths = check.paths(data["paths"], "paths")
    if "devices" in data:
        config.devices = check.devices(data["devices"], "devices")
    if "thresholds" in data:
        config.thresholds = check.thresholds(data["thresholds"], "thresholds")
    if "ports" in data:
        config.ports = check.ports(data["ports"], "ports")
    if "simulator" in data:
        config.simulator = check.simulator(data["simulator"], "simulator", root)
    return config


SIMULATOR_KEYS = ("op-from", "command", "timeout", "memory", "include-paths")
_MEMORY = re.compile(r"(\d+(?:\.\d+)?)\s*([kmg]?)i?b?", re.IGNORECASE)
# the simulator's program name on PATH: an ngspice build ("ngspice", "ngspice-39"), never a
# path, an argument or another program (a committed config must not be able to make
# lintamp run, say, a shell on the checked deck)
_COMMAND = re.compile(r"ngspice[A-Za-z0-9_.+-]*")


@dataclass(frozen=True)
class SimulatorConfig:
    """``[simulator]``: how ``--op-from ngspice`` runs ngspice.

    ``op-from = "ngspice"`` asks for it on every run (as the flag does); ``command`` is a
    program name looked up on PATH (never a path: a committed config cannot point lintamp
    at a script of the repository); ``timeout`` in seconds (default 60); ``memory`` the
    address-space limit, e.g. "2G"; ``include-paths`` folders inside the repository the
    deck's includes may also read (the PDK root outside it is given with --include-path).
    """

    op_from: str | None = None
    command: str = "ngspice"
    timeout_s: float = 60.0
    memory_bytes: int | None = None
    include_paths: tuple[Path, ...] = ()

    def to_json(self) -> dict:
        return {"op_from": self.op_from, "command": self.command, "timeout_s": self.timeout_s,
                "memory_bytes": self.memory_bytes, "include_paths": [str(p) for p in self.include_paths]}


def _load_rule_folders(folders: tuple[Path, ...], where: str, prefix: str) -> dict[str, str]:
    """Import the rules of ``rule-paths``; name -> category of every rule now known."""
    from lintamp.registry import RuleLoadError, all_rules, load_rule_folder
    try:
        for folder in folders:
            load_rule_folder(folder)
    except RuleLoadError as exc:
        raise ConfigError(where, prefix + "rule-paths", str(exc),
                          "rule modules with NAME, CATEGORY, SEVERITY, SUMMARY and check(ctx)") from None
    return {name: rule.category for name, rule in all_rules().items()}


def parse_rule_list(text: str, *, option: str,
                    known_rules: Mapping[str, str] | Iterable[str] | None = None) -> tuple[str, ...]:
    """Parse ``--only a,b`` / ``--skip ...`` with the same checks as the file."""
    names = [part.strip() for part in text.split(",") if part.strip()]
    return _Checker(option, "", rule_catalog(known_rules)).selectors(tuple(names), "")


def parse_fail_on(text: str, *, option: str = "--fail-on") -> Severity | None:
    """Parse ``--fail-on error|warning|info|never``."""
    return _Checker(option, "", {}).fail_on(text, "")


def with_overrides(config: Config, **changes) -> Config:
    """A copy of ``config`` with command-line values in place (field names as in Config)."""
    names = {f.name for f in fields(Config)}
    unknown = set(changes) - names
    if unknown:
        raise TypeError(f"no such config field(s): {', '.join(sorted(unknown))}")
    return replace(config, **changes)


class _Checker:
    """Shape checks with messages that name the file and the dotted key."""

    def __init__(self, where: str, prefix: str, catalog: Mapping[str, str]):
        self.where = where
        self.prefix = prefix
        self.catalog = catalog

    def fail(self, key: str, problem: str, expected: str) -> ConfigError:
        return ConfigError(self.where, (self.prefix + key) if key else "", problem, expected)

    def strings(self, value, key: str) -> tuple[str, ...]:
        if isinstance(value, str):
            raise self.fail(key, f"is a single string {value!r}", f'a list of strings, e.g. ["{value}"]')
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            raise self.fail(key, f"is {_shape(value)}", "a list of strings")
        return tuple(value)

    def globs(self, value, key: str) -> tuple[str, ...]:
        items = self.strings(value, key)
        for item in items:
            if not item.strip():
                raise self.fail(key, "has an empty pattern", "glob patterns such as \"*.sp\"")
            self.valid_glob(item, key)
        return items

    def valid_glob(self, pattern: str, key: str, *, whole_name: bool = False) -> None:
        try:
            _glob_regex(pattern.strip().removeprefix("./") if not whole_name else pattern.lower(),
                        whole_name=whole_name)
        except GlobError as exc:
            raise self.fail(key, f"{pattern!r} {exc}", "glob patterns such as \"*.sp\" or \"[a-z]*\"") from None

    def selectors(self, value, key: str) -> tuple[str, ...]:
        items = value if isinstance(value, tuple) else self.strings(value, key)
        for item in items:
            if item != ALL and item not in CATEGORIES and item not in self.catalog:
                raise self.fail(key, f"unknown rule or category {item!r}{_suggest(item, self.catalog)}",
                                "a rule name (see `lintamp rules`), a category ("
                                + ", ".join(CATEGORIES) + ") or \"all\"")
        return items

    def fail_on(self, value, key: str) -> Severity | None:
        if not isinstance(value, str) or value.strip().lower() not in FAIL_ON_CHOICES:
            raise self.fail(key, f"is {value!r}", "one of " + ", ".join(FAIL_ON_CHOICES))
        text = value.strip().lower()
        return None if text == "never" else Severity.parse(text)

    def bandwidth(self, value, key: str) -> str:
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise self.fail(key, f"is {_shape(value)}", 'a frequency such as "20meg" or 2e7')
        text = str(value).strip()
        if not re.fullmatch(r"[0-9.]+(?:e[-+]?\d+)?[a-z]*", text, re.IGNORECASE):
            raise self.fail(key, f"is {value!r}", 'a frequency such as "20meg", "1.5g" or 2e7')
        return text

    def simulator(self, value, key: str, root: Path) -> SimulatorConfig:
        table = self.table(value, key)
        for name in table:
            if name not in SIMULATOR_KEYS:
                raise self.fail(f"{key}.{name}", "unknown key", "one of " + ", ".join(SIMULATOR_KEYS))
        op_from = table.get("op-from")
        if op_from is not None and op_from != "ngspice":
            raise self.fail(f"{key}.op-from", f"is {op_from!r}", '"ngspice"')
        command = table.get("command", "ngspice")
        if not isinstance(command, str) or not _COMMAND.fullmatch(command):
            raise self.fail(f"{key}.command", f"is {command!r}",
                            'the name of an ngspice build on PATH, such as "ngspice" or "ngspice-39" (no path, no arguments)')
        timeout = table.get("timeout", 60)
        if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) or not 0 < timeout <= 3600:
            raise self.fail(f"{key}.timeout", f"is {timeout!r}", "seconds, more than 0 and at most 3600")
        memory = table.get("memory")
        memory_bytes = None
        if memory is not None:
            m = _MEMORY.fullmatch(str(memory).strip()) if not isinstance(memory, bool) else None
            if m is None:
                raise self.fail(f"{key}.memory", f"is {memory!r}", 'a size such as "2G" or "512M"')
            memory_bytes = int(float(m.group(1)) * {"": 1, "k": 1 << 10, "m": 1 << 20, "g": 1 << 30}[m.group(2).lower()])
            if memory_bytes < 64 << 20:
                raise self.fail(f"{key}.memory", f"is {memory!r}", "at least 64M (ngspice needs it to start)")
        paths: tuple[Path, ...] = ()
        if "include-paths" in table:
            from lintamp.safe_paths import include_root_inside, repository_of
            try:
                paths = tuple(include_root_inside(root, p, repository_of(root))
                              for p in self.strings(table["include-paths"], f"{key}.include-paths"))
            except ValueError as exc:
                raise self.fail(f"{key}.include-paths", str(exc),
                                "folders inside the repository (give others with --include-path)") from None
        return SimulatorConfig(op_from, command, float(timeout), memory_bytes, paths)

    def table(self, value, key: str) -> dict:
        if not isinstance(value, dict):
            raise self.fail(key, f"is {_shape(value)}", "a table")
        return value

    def severity_table(self, value, key: str) -> dict[str, Severity]:
        out: dict[str, Severity] = {}
        for name, level in self.table(value, key).items():
            sub = f"{key}.{name}"
            if name not in CATEGORIES and name not in self.catalog:
                raise self.fail(sub, f"unknown rule or category{_suggest(name, self.catalog)}",
                                "a rule name or a category")
            if not isinstance(level, str) or level.strip().lower() not in ("error", "warning", "info"):
                raise self.fail(sub, f"is {level!r}", '"error", "warning" or "info"')
            out[name] = Severity.parse(level)
        return out

    def paths(self, value, key: str) -> dict[str, PathPolicy]:
        out: dict[str, PathPolicy] = {}
        for pattern, spec in self.table(value, key).items():
            sub = f'{key}."{pattern}"'
            if not pattern.strip():
                raise self.fail(sub, "has an empty glob", 'a path glob such as "tb/**"')
            if not isinstance(spec, dict):
                raise self.fail(sub, f"is {_shape(spec)}",
                                f'a table such as "{pattern}" = {{ skip = ["unused-port"] }}')
            self.valid_glob(pattern, sub)
            for k in spec:
                if k not in PATH_KEYS:
                    raise self.fail(f"{sub}.{k}", "unknown key", " or ".join(PATH_KEYS))
            skip = spec.get("skip", [])
            out[pattern] = PathPolicy(
                skip=self.selectors(self.strings(skip, f"{sub}.skip"), f"{sub}.skip") if skip else ())
        return out

    def devices(self, value, key: str) -> tuple[DeviceMapping, ...]:
        out: list[DeviceMapping] = []
        for pattern, spec in self.table(value, key).items():
            sub = f'{key}."{pattern}"'
            self.valid_glob(pattern, sub, whole_name=True)
            spec = self.table(spec, sub)
            for k in spec:
                if k not in ("kind", "pins", "value"):
                    raise self.fail(f"{sub}.{k}", "unknown key", "kind, pins or value")
            kind = spec.get("kind")
            if kind not in DEVICE_KINDS:
                raise self.fail(f"{sub}.kind", "is missing" if kind is None else f"is {kind!r}",
                                "one of " + " ".join(DEVICE_KINDS))
            if "pins" not in spec:
                raise self.fail(f"{sub}.pins", "is missing", "the role of each port in order, e.g. "
                                + json.dumps(list(_PIN_ROLES[kind][0] + _PIN_ROLES[kind][1])))
            pins = tuple(p.lower() for p in self.strings(spec["pins"], f"{sub}.pins"))
            self._check_pins(pins, kind, f"{sub}.pins")
            val = spec.get("value")
            if val is not None and (not isinstance(val, str) or not val.strip()):
                raise self.fail(f"{sub}.value", f"is {val!r}", "the name of the instance parameter holding the value")
            if val is not None and kind not in ("resistor", "capacitor", "inductor"):
                raise self.fail(f"{sub}.value", f"is set for a {kind}", "value only for resistor, capacitor or inductor")
            out.append(DeviceMapping(pattern, kind, pins, val.lower() if val else None))
        return tuple(out)

    def _check_pins(self, pins: tuple[str, ...], kind: str, key: str) -> None:
        required, optional = _PIN_ROLES[kind]
        allowed = required + optional
        roles = [p for p in pins if p != IGNORED_PIN]
        for p in roles:
            if p not in allowed:
                raise self.fail(key, f"has {p!r}, not a {kind} terminal",
                                f"terminals {', '.join(allowed)} (or \"-\" for a port to ignore)")
        doubled = sorted({p for p in roles if roles.count(p) > 1})
        if doubled:
            raise self.fail(key, f"names {', '.join(doubled)} twice", "each terminal once")
        missing = [p for p in required if p not in roles]
        if missing:
            raise self.fail(key, f"lacks {', '.join(missing)}", f"every one of {', '.join(required)}")

    def thresholds(self, value, key: str) -> dict[str, float]:
        table = self.table(value, key)
        if table:
            from lintamp.registry import import_rule_modules

            import_rule_modules()  # rule modules declare their thresholds on import
        out: dict[str, float] = {}
        for name, number in table.items():
            sub = f"{key}.{name}"
            if name not in _THRESHOLDS:
                names = ", ".join(_THRESHOLDS) or "none are declared yet"
                raise self.fail(sub, f"unknown threshold{_suggest(name, _THRESHOLDS)}",
                                f"a threshold a rule declares ({names})")
            if isinstance(number, bool) or not isinstance(number, (int, float)):
                unit = _THRESHOLDS[name].unit
                raise self.fail(sub, f"is {_shape(number)}", f"a number in {unit}")
            if number != number or number in (float("inf"), float("-inf")):
                raise self.fail(sub, f"is {number!r}", "a finite number")
            out[name] = float(number)
        return out


    def rule_paths(self, value, key: str, root: Path) -> tuple[Path, ...]:
        out: list[Path] = []
        for text in self.strings(value, key):
            folder = (root / text).resolve()
            if folder != root and root not in folder.parents:
                raise self.fail(key, f"{text!r} is outside the config's folder",
                                "folders of the repository, e.g. \"lint/rules\"")
            if not folder.is_dir():
                raise self.fail(key, f"{text!r} is not a folder", "existing folders of rule modules")
            out.append(folder)
        return tuple(out)

    def ports(self, value, key: str) -> dict[str, tuple[str, ...]]:
        out: dict[str, tuple[str, ...]] = {}
        for kind, globs in self.table(value, key).items():
            if kind not in PORT_KINDS:
                raise self.fail(f"{key}.{kind}", "unknown port kind", "one of " + ", ".join(PORT_KINDS))
            out[kind] = tuple(g.lower() for g in self.globs(globs, f"{key}.{kind}"))
        return out


def _shape(value) -> str:
    names = {str: "a string", bool: "a boolean", int: "an integer", float: "a number",
             list: "a list", dict: "a table"}
    return names.get(type(value), type(value).__name__)


def _suggest(name: str, known: Iterable[str]) -> str:
    import difflib

    close = difflib.get_close_matches(name, list(known) + list(CATEGORIES), n=1, cutoff=0.75)
    return f" (did you mean {close[0]!r}?)" if close else ""
