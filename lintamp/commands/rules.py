"""``lintamp rules``: every rule with its category, default severity and summary."""

from __future__ import annotations

import argparse
from pathlib import Path

from lintamp.commands.common import EXIT_OK, add_config_options, epilog, load_config

EXAMPLES = epilog(
    ("lintamp rules", "one line per rule, by category"),
    ("lintamp rules --format json", "the same as a JSON list, for scripts"),
)


def register(sub) -> None:
    p = sub.add_parser("rules", help="list every rule",
                       description="Every rule lintamp knows (built-in, plugins, the config's rule-paths): "
                                   "name, category, default severity and a one-line summary.",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--format", default="text", choices=["text", "json"],
                   help="text: an aligned table; json: a list of objects (default: text)")
    add_config_options(p)  # the config's rule-paths add the repository's own rules
    p.set_defaults(run=run)


def run(args) -> int:
    from lintamp.registry import all_rules
    load_config(args, Path.cwd())
    rules = all_rules()
    if args.format == "json":
        import json
        print(json.dumps([r.to_json() for r in rules.values()], indent=2))
        return EXIT_OK
    width = max(len(n) for n in rules)
    for rule in sorted(rules.values(), key=lambda r: (r.category, r.name)):
        print(f"{rule.name:<{width}}  {rule.category:<12}  {rule.severity.label:<7}  {rule.summary}")
    return EXIT_OK
