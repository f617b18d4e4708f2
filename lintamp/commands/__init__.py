"""The front ends: one module per command, each with ``register(subparsers)`` and ``run(args)``.

A command module adds its subparser and options in ``register`` and sets
``run`` as the parser default; :mod:`lintamp.cli` builds the parser from
:data:`COMMANDS` and calls ``args.run(args)``.  What the commands share (exit codes,
the usage error, config and ``--op`` loading) is in :mod:`.common`.  Commands never
import :mod:`lintamp.cli`.
"""

COMMANDS = ("check", "rules", "explain", "impedance", "audit")
