"""What every command shares: exit codes, the usage error, config and ``--op`` loading.

Commands import this module, never :mod:`lintamp.cli`; the CLI imports the commands.
Imports of the heavier layers stay inside the functions: a pre-commit hook pays only
for what the command it runs needs.
"""

from __future__ import annotations

from pathlib import Path

# INTERFACE.md: 0 nothing at or above --fail-on, 1 findings at or above it,
# 2 the tool could not do its job (bad option or config, path not found, internal error).
EXIT_OK, EXIT_FINDINGS, EXIT_TROUBLE = 0, 1, 2


class UsageError(Exception):
    """Bad options, config or paths: reported as one line ``lintamp: ...``, exit 2."""


def known_rules() -> dict[str, str]:
    """Rule name -> category of every registered rule."""
    from lintamp.registry import all_rules
    return {name: rule.category for name, rule in all_rules().items()}


def add_config_options(parser) -> None:
    """``--config FILE`` and ``--no-config``, for every command that reads the config."""
    parser.add_argument("--config", metavar="FILE",
                        help="read this config file instead of looking for one")
    parser.add_argument("--no-config", action="store_true",
                        help="read no config file: built-in defaults only")


def load_config(args, start: Path, **changes):
    """The configuration a command runs with: ``--config`` / ``--no-config`` / discovery
    upwards from ``start``, then the command line's ``changes`` (Config field names).

    Without a config file the project root (cache, relative paths) is the current folder.
    A :class:`~lintamp.config.ConfigError` becomes a :class:`UsageError`.
    """
    from lintamp.config import ConfigError, load_config as read_config, with_overrides
    explicit = Path(args.config) if args.config else None
    if explicit is not None and not explicit.is_file():
        raise UsageError(f"--config {args.config}: no such file")
    start = start if start.is_dir() else start.parent
    try:
        config = read_config(explicit, no_config=args.no_config, start=start.resolve(),
                             known_rules=known_rules())
        if config.source is None:
            changes.setdefault("root", Path.cwd().resolve())
        return with_overrides(config, **changes) if changes else config
    except ConfigError as exc:
        raise UsageError(str(exc)) from None


def config_error(exc) -> UsageError:
    """A :class:`~lintamp.config.ConfigError` raised while reading an option, as a usage error."""
    return UsageError(str(exc))


def load_op(path_text: str | None):
    """The ``--op FILE`` operating-point table (CSV or JSON), or None without the option."""
    if not path_text:
        return None
    from lintamp.engine.op_table import load_op_table
    from lintamp.safe_paths import read_text
    try:
        from lintamp.safe_paths import MAX_TABLE_BYTES, read_regular
        from lintamp.engine.ngspice_op import looks_like_raw, table_from_designer_raw
        data = read_regular(path_text, limit=MAX_TABLE_BYTES)  # a regular file: no pipe, no device
        if looks_like_raw(data):  # a raw file of the designer's own ngspice run
            return table_from_designer_raw(data, path_text)
        return load_op_table(read_text(path_text))
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        raise UsageError(f"--op {path_text}: {getattr(exc, 'strerror', None) or exc}") from None


def existing_file(path_text: str) -> Path:
    """The NETLIST argument of impedance and audit: a file that exists."""
    path = Path(path_text)
    if not path.is_file():
        raise UsageError(f"{path_text}: no such file")
    return path


def output_target(option: str, text: str) -> Path:
    """The file an option such as ``-o`` or ``--write-baseline`` will write, checked before
    anything is computed: its folder must exist and it must not be a folder itself.

    Every command's output paths come through here, so a rule about where lintamp may
    write is made in one place.
    """
    path = Path(text)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise UsageError(f"{option} {text}: no such folder")
    if path.is_dir():
        raise UsageError(f"{option} {text}: is a folder, not a file")
    return path


def report_internal_errors(errors, stream) -> int:
    """Print each internal error on its own line; EXIT_TROUBLE when there was one."""
    for error in errors:
        print(f"lintamp: internal error: {error}", file=stream)
    return EXIT_TROUBLE if errors else EXIT_OK


def epilog(*examples: tuple[str, str]) -> str:
    """The closing lines of a command's ``--help``: a few examples, each with what it does."""
    lines = ["examples:"]
    for command, what in examples:
        lines.append(f"  {command}")
        lines.append(f"      {what}")
    return "\n".join(lines)


OP_FROM_CHOICES = ("ngspice",)


def add_op_from_option(parser) -> None:
    """``--op-from ngspice``: the operating point from the designer's own ngspice."""
    parser.add_argument("--op-from", choices=OP_FROM_CHOICES, metavar="SIMULATOR",
                        help="run ngspice on a sanitised .op deck of the circuit and reason with its "
                             "operating point (BSIM and other PDK models); see [simulator] in the config")


def op_from(args, config) -> str | None:
    """The simulator asked for by ``--op-from`` or ``[simulator] op-from``, else None."""
    chosen = getattr(args, "op_from", None)
    if chosen:
        return chosen
    simulator = getattr(config, "simulator", None)
    return simulator.op_from if simulator is not None else None


def simulator_settings(config):
    """The :class:`~lintamp.engine.ngspice_op.SimulatorSettings` of ``[simulator]``."""
    from lintamp.engine.ngspice_op import SimulatorSettings
    sim = getattr(config, "simulator", None)
    if sim is None:
        return SimulatorSettings()
    return SimulatorSettings(sim.command, sim.timeout_s, sim.memory_bytes, sim.include_paths)


def table_from_simulator(path: Path, config, *, top: str | None, include_paths=()):
    """``(table, note)``: the op table ngspice gives for ``path``, or None and the one note
    that says why not (the commands then reason by inspection, exit code unchanged)."""
    from lintamp.api import load_design, read_options
    from lintamp.engine.ngspice_op import SimulatorFailed, operating_point_table
    from lintamp.netlist.parser import parse_file
    from lintamp.circuit.flatten import flatten
    settings = simulator_settings(config)
    include_paths = [*include_paths, *settings.include_paths]
    opts = read_options(path, config, include_paths)
    try:
        netlist = parse_file(path, opts)
        design = load_design(netlist, config, top=top)
        circuit = flatten(design)
        table = operating_point_table(path, design, netlist, circuit, opts, settings)
    except SimulatorFailed as exc:
        return None, f"--op-from ngspice: {exc}; reasoning by inspection instead"
    except (ValueError, RuntimeError, ArithmeticError, OSError) as exc:
        return None, f"--op-from ngspice: no deck for ngspice ({type(exc).__name__}: {exc}); reasoning by inspection instead"
    note = f"operating point from ngspice ({len(table)} devices, {table.elapsed_s:.2f} s)"
    if table.lacked:
        note += "; ngspice gave nothing for " + ", ".join(table.lacked[:6])
    return table, note
