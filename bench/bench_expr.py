"""Timing of the number and expression layer (not a test: run it by hand).

    python bench/bench_expr.py [--runs N]

Prints the median of N runs per case.  The token mix is our own scenario: element
values as they occur in a large extracted or PDK-based netlist, where most values are
plain numbers with suffixes, many repeat, and some are small brace expressions.
"""

from __future__ import annotations

import argparse
import os
import random
import statistics
import sys
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))

from lintamp.netlist.expr import compile_expr, evaluate_value  # noqa: E402
from lintamp.netlist.units import parse_number  # noqa: E402

TOKENS_PER_RUN = 1_000_000


def number_tokens(count: int, seed: int = 7) -> list[str]:
    rng = random.Random(seed)
    common = ["10k", "1.5u", "0.18u", "2", "1e-15", "4.7MEG", "100n", "1", "0", "10uF", "5kohm"]
    tokens = []
    for _ in range(count):
        if rng.random() < 0.5:
            tokens.append(rng.choice(common))
        else:  # parasitic-style unique values
            tokens.append(f"{rng.uniform(0.1, 999):.4g}{rng.choice(['f', 'a', 'p', 'e-16', ''])}")
    return tokens


def expression_texts(count: int) -> list[str]:
    return [f"w{i % 97}*nf + l*{i}/2 - sqrt(ad{i % 13})" for i in range(count)]


def median_seconds(action, runs: int) -> float:
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        action()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=5)
    options = parser.parse_args(argv)
    runs = options.runs

    tokens = number_tokens(TOKENS_PER_RUN)
    texts = expression_texts(2_000)
    scope = {f"w{i}": 1e-6 for i in range(97)} | {f"ad{i}": 1e-12 for i in range(13)}
    scope |= {"nf": 2.0, "l": 1.5e-7}
    compiled = [compile_expr(text) for text in texts]
    values = ["{w3*nf}", "10k", "'l*2'", "w5", "1.5u"] * 200_000

    def parse_all():
        for token in tokens:
            parse_number(token)

    def compile_cold():
        compile_expr.cache_clear()
        for text in texts:
            compile_expr(text)

    def compile_warm():
        for text in texts:
            compile_expr(text)

    def evaluate_all():
        for expr in compiled:
            expr.evaluate(scope)

    def values_all():
        for token in values:
            evaluate_value(token, scope)

    compile_warm()  # fill the cache for the warm case
    rows = [
        ("parse_number, 1M tokens (50% repeated)", len(tokens), median_seconds(parse_all, runs)),
        ("compile_expr, cache cold (unique texts)", len(texts), median_seconds(compile_cold, runs)),
        ("compile_expr, cache warm (same texts)", len(texts), None),
        ("Expr.evaluate, w*nf + l*k/2 - sqrt(ad)", len(compiled), median_seconds(evaluate_all, runs)),
        ("evaluate_value, 1M mixed value tokens", len(values), median_seconds(values_all, runs)),
    ]
    compile_warm()
    rows[2] = (rows[2][0], rows[2][1], median_seconds(compile_warm, runs))

    print(f"median of {runs} runs, Python {sys.version.split()[0]}")
    print(f"{'case':44} {'items':>9} {'total s':>9} {'per item':>11}")
    for label, count, seconds in rows:
        per_item_us = seconds / count * 1e6
        print(f"{label:44} {count:>9} {seconds:>9.3f} {per_item_us:>8.2f} us")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
