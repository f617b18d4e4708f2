"""Long mutation-fuzz run of lintamp over real and generated netlists.

Usage::

    python fuzz/run_fuzz.py --inputs 1000000 --jobs 2 [--seed 1] [--out /tmp/lintamp-fuzz]

Seeds are the samples and the real netlists in ``../shared/corpus`` (files under
8 KB; the corpus part is skipped with a message when absent), plus decks from the
card grammar in :mod:`fuzz.grammar`.  Each input goes through
:func:`fuzz.target.exercise` in process (read, parse, elaborate, rules, decide,
every reporter), then, with ``--commands`` (default: all three), through what
``lintamp impedance`` and ``lintamp audit`` do with it as well (the impedance of a
net and its text, the review sheet as text, JSON and Markdown; their text must hold
no raw control character).  ``--commands check`` is the fast check-only run (one
input in 25 then also asks the engine for an impedance).
A crash is an exception escaping lintamp, a failed rule, a finding without a
place, an input that takes longer than ``--timeout`` seconds, or a MemoryError
under the per-worker address-space limit.  Every distinct crash (by exception
type and innermost lintamp frame) is saved with its traceback under ``--out``;
nothing is ever written inside the repository.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import multiprocessing as mp
import random
import re
import resource
import signal
import sys
import tempfile
import time
import traceback
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

from fuzz import grammar  # noqa: E402
from fuzz.target import COMMANDS, exercise, make_sandbox  # noqa: E402

CORPUS = REPO.parent / "shared" / "corpus"
MAX_SEED_BYTES = 8 * 1024
MAX_INPUT_BYTES = 64 * 1024  # larger inputs are the hostile-structure tests' job
MEMORY_LIMIT_BYTES = 4 * 1024 ** 3


class InputTimeout(BaseException):
    """Raised by the alarm: a BaseException so that no ``except Exception`` hides it."""


def _on_alarm(signum, frame):
    raise InputTimeout()


def load_seeds() -> list[bytes]:
    seeds = [p.read_bytes() for p in sorted((REPO / "samples").glob("*")) if p.is_file()]
    if CORPUS.is_dir():
        for path in sorted(CORPUS.rglob("*")):
            if path.is_file() and path.suffix != ".tsv" and path.stat().st_size <= MAX_SEED_BYTES:
                seeds.append(path.read_bytes())
    else:
        print(f"run_fuzz: no corpus at {CORPUS}; seeding from samples and the grammar only",
              file=sys.stderr)
    return seeds


_SEEDS: list[bytes] = []
_SANDBOX: Path | None = None


def _init_worker(sandbox: str) -> None:
    global _SEEDS, _SANDBOX
    _SEEDS = load_seeds()
    _SANDBOX = Path(sandbox)
    try:
        soft, hard = resource.getrlimit(resource.RLIMIT_AS)
        resource.setrlimit(resource.RLIMIT_AS, (MEMORY_LIMIT_BYTES, hard))
    except (ValueError, OSError):
        pass
    signal.signal(signal.SIGALRM, _on_alarm)


def generate(r: random.Random) -> bytes:
    roll = r.random()
    if roll < 0.7 and _SEEDS:
        data = grammar.mutate(r, r.choice(_SEEDS), _SEEDS)
    elif roll < 0.85:
        data = grammar.deck(r).encode("utf-8", "surrogatepass")
    else:
        data = grammar.mutate(r, grammar.deck(r).encode("utf-8", "surrogatepass"), _SEEDS)
    return data[:MAX_INPUT_BYTES]


def crash_key(exc: BaseException) -> str:
    frames = traceback.extract_tb(exc.__traceback__)
    ours = [f for f in frames if "/lintamp/" in f.filename or "/rules/" in f.filename]
    where = ours[-1] if ours else (frames[-1] if frames else None)
    place = f"{Path(where.filename).name}:{where.lineno}" if where else "?"
    detail = type(exc).__name__
    if type(exc).__name__ == "FuzzFailure":
        detail += ":" + re.sub(r"\d+", "N", str(exc).split(" failed: ")[-1][:80])
    return f"{detail}@{place}"


def run_batch(args: tuple) -> dict:
    """``count`` inputs from ``seed``; returns counts and the first input of each crash."""
    seed, count, timeout_s, commands = args
    r = random.Random(seed)
    crashes: dict[str, dict] = {}
    slowest = 0.0
    for index in range(count):
        data = generate(r)
        engine = r.random() < 0.04
        start = time.perf_counter()
        signal.setitimer(signal.ITIMER_REAL, timeout_s)
        try:
            exercise(data, _SANDBOX, engine=engine, formats=("text", "json") if index % 10 else
                     ("text", "json", "sarif", "github", "junit"), commands=commands)
        except InputTimeout:
            key = f"timeout>{timeout_s}s"
            crashes.setdefault(key, {"input": data.hex(), "trace": "timeout", "count": 0})
            crashes[key]["count"] += 1
        except BaseException as exc:  # noqa: BLE001 - every escape is what we look for
            if isinstance(exc, KeyboardInterrupt):
                raise
            key = crash_key(exc)
            entry = crashes.setdefault(key, {"input": data.hex(), "trace": traceback.format_exc(),
                                             "count": 0, "engine": engine})
            entry["count"] += 1
            if len(data) * 2 < len(entry["input"]):  # keep the smallest reproducer
                entry.update(input=data.hex(), trace=traceback.format_exc(), engine=engine)
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
        slowest = max(slowest, time.perf_counter() - start)
    return {"count": count, "crashes": crashes, "slowest_s": slowest}


def save(out: Path, key: str, entry: dict) -> Path:
    digest = hashlib.sha1(key.encode()).hexdigest()[:12]
    target = out / "crashes" / digest
    target.mkdir(parents=True, exist_ok=True)
    (target / "input.sp").write_bytes(bytes.fromhex(entry["input"]))
    (target / "trace.txt").write_text(f"{key}\ncount: {entry['count']}\nengine: "
                                      f"{entry.get('engine')}\n\n{entry['trace']}", encoding="utf-8")
    return target


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--inputs", type=int, default=100_000)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--batch", type=int, default=2000)
    parser.add_argument("--timeout", type=float, default=10.0, help="seconds per input")
    parser.add_argument("--commands", default="check,impedance,audit",
                        help="what each input goes through (comma-separated; default: all three)")
    parser.add_argument("--out", type=Path, default=Path(tempfile.gettempdir()) / "lintamp-fuzz")
    args = parser.parse_args(argv)
    out = args.out.resolve()
    if out == REPO or REPO in out.parents:
        parser.error("--out must be outside the repository")
    out.mkdir(parents=True, exist_ok=True)
    sandbox = make_sandbox(out / "sandbox")
    commands = tuple(c.strip() for c in args.commands.split(",") if c.strip())
    if not commands or any(c not in COMMANDS for c in commands):
        parser.error(f"--commands: a comma-separated list of {', '.join(COMMANDS)}")
    batches = [(args.seed * 1_000_003 + i, min(args.batch, args.inputs - i * args.batch), args.timeout,
                commands)
               for i in range((args.inputs + args.batch - 1) // args.batch)]
    tried = 0
    crashes: dict[str, dict] = {}
    slowest = 0.0
    start = time.time()
    last = start
    with mp.get_context("fork").Pool(args.jobs, _init_worker, (str(sandbox),)) as pool:
        for result in pool.imap_unordered(run_batch, batches):
            tried += result["count"]
            slowest = max(slowest, result["slowest_s"])
            for key, entry in result["crashes"].items():
                if key not in crashes:
                    crashes[key] = entry
                    print(f"run_fuzz: new crash {key} -> {save(out, key, entry)}", flush=True)
                else:
                    crashes[key]["count"] += entry["count"]
            now = time.time()
            if now - last > 30 or tried == args.inputs:
                last = now
                print(f"run_fuzz: {tried} inputs, {tried / (now - start):.0f}/s, "
                      f"{len(crashes)} distinct crashes, slowest input {slowest:.2f} s", flush=True)
    elapsed = time.time() - start
    summary = {"inputs": tried, "seconds": round(elapsed, 1), "rate_per_s": round(tried / elapsed, 1),
               "jobs": args.jobs, "seed": args.seed, "slowest_input_s": round(slowest, 3),
               "crashes": {k: v["count"] for k, v in sorted(crashes.items())}}
    (out / "summary.json").write_text(json.dumps(summary, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(summary, indent=2))
    return 1 if crashes else 0


if __name__ == "__main__":
    sys.exit(main())
