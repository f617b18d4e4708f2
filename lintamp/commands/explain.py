"""``lintamp explain RULE``: the rule's page (what it finds, why it matters, example, fix)."""

from __future__ import annotations

import argparse
from pathlib import Path

from lintamp.commands.common import EXIT_OK, UsageError, add_config_options, epilog, load_config

EXAMPLES = epilog(
    ("lintamp explain unbiased-gate", "what the rule finds, why it matters, an example, the fix"),
    ("lintamp explain unused-waiver | less", "page through a long one"),
)


def register(sub) -> None:
    p = sub.add_parser("explain", help="show a rule's full page",
                       description="The full page of one rule, the same text the SARIF log "
                                   "carries as the rule's help.",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("rule", metavar="RULE", help="a rule name, as `lintamp rules` lists them")
    add_config_options(p)  # the config's rule-paths add the repository's own rules
    p.set_defaults(run=run)


def run(args) -> int:
    from lintamp.registry import all_rules
    load_config(args, Path.cwd())
    rules = all_rules()
    rule = rules.get(args.rule)
    if rule is None:
        close = [n for n in rules if args.rule.lower() in n or n in args.rule.lower()]
        hint = f"; did you mean {', '.join(close)}?" if close else "; `lintamp rules` lists them"
        raise UsageError(f"unknown rule '{args.rule}'{hint}")
    print(f"{rule.name}  ({rule.category}, default severity {rule.severity.label})")
    print()
    print(rule.doc)
    return EXIT_OK
