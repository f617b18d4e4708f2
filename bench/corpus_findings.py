"""Findings over the real-world corpus, per rule, severity and folder (not a test: run by hand).

    python bench/corpus_findings.py [--corpus ../shared/corpus] [--folders pdk|all|NAME,...]
                                    [--dump FILE.jsonl] [--sample N] [--seed S]
                                    [--show RULE] [--limit N]

Checks every netlist file of each repository folder as ``lintamp check`` does (include
paths = that folder, the decision layer applied, a finding met through two files once),
and prints:

- a table of every rule that found something, one column per severity (e/w/i);
- a table per folder: errors, warnings, infos and their sum of errors + warnings;
- the time taken and any internal errors.

``--folders pdk`` (the default) takes the open-PDK design folders (sky130, gf180,
IHP: see ``PDK_FOLDERS``); ``all`` takes every folder.  ``--dump`` writes one JSON line
per finding, ``--sample N`` prints N warnings and errors drawn at random (``--seed``)
for a hand review, ``--show RULE`` prints findings of one rule.  Compare two runs by
their tables; the sample with the same seed lists the same draw when the findings are
the same.  Skips with a message when the corpus is absent.
"""

from __future__ import annotations

import argparse
import json
import os
import random
import sys
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from lintamp.api import check_paths  # noqa: E402
from lintamp.config import Config  # noqa: E402

NETLIST_ENDINGS = (".cir", ".sp", ".net", ".spi", ".spice", ".ckt", ".cdl", ".scs", ".sub")
# Folders of designs made with an open PDK (sky130, gf180mcu, IHP SG13G2): the
# measurement set of the precision review.  A folder not named here whose name says
# one of the PDKs is taken too, so a new corpus slice joins without an edit.
PDK_FOLDERS = (
    "SkillSurf__cmos-pll-ihp-sg13g2",
    "agurlask__chipathon-2026-gf180mcu-hall-effect-sensor",
    "algofoogle__ttihp0p3-antonalog",
    "d-m-bailey__sky130_ajc_ip__brownout",
    "edsonsilva17__tt06-analog-ldo-regulator-eh",
    "efabless__sky130_aa_ip__programmable_pll",
    "efabless__sky130_sw_ip__bgrref_por",
    "elnaggar__The-Silent-Owl-GF180MCU-WB-LNA",
    "fossi-foundation__sky130_icrg_ip__ulpcomp",
    "gilangfajrul__sky130_gff_ip__bgr_1.2v",
    "idea-fasoc__OpenFASOC",
    "mabrains__Analog_blocks",
)
PDK_WORDS = ("sky130", "gf180", "ihp", "sg13g2", "tt0")
SEVERITIES = ("error", "warning", "info")


def chosen_folders(corpus: Path, which: str) -> list[Path]:
    folders = sorted(p for p in corpus.iterdir() if p.is_dir())
    if which == "all":
        return folders
    if which == "pdk":
        return [p for p in folders
                if p.name in PDK_FOLDERS or any(w in p.name.lower() for w in PDK_WORDS)]
    names = {n.strip() for n in which.split(",") if n.strip()}
    return [p for p in folders if p.name in names]


def run(folders: list[Path]):
    """Every finding of every folder: [(folder, finding)], internal errors, files, seconds."""
    found = []
    errors = []
    files = 0
    start = time.perf_counter()
    for repo in folders:
        paths = sorted(p for p in repo.rglob("*")
                       if p.is_file() and p.suffix.lower() in NETLIST_ENDINGS)
        files += len(paths)
        if not paths:
            continue
        config = Config()
        try:
            report, internal = check_paths(paths, config, include_paths=[repo])
        except Exception as exc:  # a crash is a bug to report, not a reason to stop
            errors.append(f"{repo.name}: {type(exc).__name__}: {exc}")
            continue
        errors.extend(internal)
        found.extend((repo.name, f) for f in report.findings)
    return found, errors, files, time.perf_counter() - start


def severity_of(finding) -> str:
    return finding.severity.label


def print_tables(found, folders) -> None:
    by_rule: dict[str, Counter] = {}
    by_folder: dict[str, Counter] = {f.name: Counter() for f in folders}
    for folder, f in found:
        sev = severity_of(f)
        by_rule.setdefault(f.rule, Counter())[sev] += 1
        by_folder[folder][sev] += 1
    print(f"{'rule':<24} {'error':>7} {'warning':>7} {'info':>7} {'e+w':>7}")
    total = Counter()
    for rule in sorted(by_rule):
        c = by_rule[rule]
        total.update(c)
        print(f"{rule:<24} {c['error']:>7} {c['warning']:>7} {c['info']:>7} "
              f"{c['error'] + c['warning']:>7}")
    print(f"{'total':<24} {total['error']:>7} {total['warning']:>7} {total['info']:>7} "
          f"{total['error'] + total['warning']:>7}")
    width = max((len(n) for n in by_folder), default=10)
    print()
    print(f"{'folder':<{width}} {'error':>7} {'warning':>7} {'info':>7} {'e+w':>7}")
    for name, c in by_folder.items():
        print(f"{name:<{width}} {c['error']:>7} {c['warning']:>7} {c['info']:>7} "
              f"{c['error'] + c['warning']:>7}")


def line_of(folder, f) -> str:
    loc = f.location
    path = os.path.relpath(loc.path) if os.path.isabs(loc.path) else loc.path
    return (f"[{severity_of(f)[0]}] {f.rule} {path}:{loc.line} [{f.cell or 'top'}] "
            f"{f.subject}: {f.message}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser()
    parser.add_argument("--corpus", default=str(ROOT.parent / "shared" / "corpus"))
    parser.add_argument("--folders", default="pdk")
    parser.add_argument("--dump", default="")
    parser.add_argument("--sample", type=int, default=0)
    parser.add_argument("--show", action="append", default=[])
    parser.add_argument("--limit", type=int, default=10)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    corpus = Path(args.corpus)
    if not corpus.is_dir():
        print(f"corpus not found at {corpus}; nothing to do")
        return 0
    folders = chosen_folders(corpus, args.folders)
    found, errors, files, seconds = run(folders)
    print_tables(found, folders)
    print(f"\n{files} files in {len(folders)} folders in {seconds:.1f} s; "
          f"{len(errors)} internal errors")
    for e in errors[:10]:
        print("  " + e)
    if args.dump:
        with open(args.dump, "w", encoding="utf-8") as out:
            for folder, f in found:
                loc = f.location
                out.write(json.dumps({
                    "folder": folder, "rule": f.rule, "severity": severity_of(f),
                    "path": str(loc.path), "line": loc.line, "cell": f.cell,
                    "subject": f.subject, "message": f.message,
                    "explanation": list(f.explanation)[:4]}) + "\n")
    rng = random.Random(args.seed)
    if args.sample:
        loud = [(folder, f) for folder, f in found if severity_of(f) in ("error", "warning")]
        rng.shuffle(loud)
        print(f"\n== sample: {min(args.sample, len(loud))} of {len(loud)} warnings and errors")
        for folder, f in loud[:args.sample]:
            print("- " + line_of(folder, f))
    for rule in args.show:
        chosen = [s for s in found if s[1].rule == rule]
        rng.shuffle(chosen)
        print(f"\n== {rule}: {len(chosen)} findings, {min(args.limit, len(chosen))} shown")
        for folder, f in chosen[:args.limit]:
            print("- " + line_of(folder, f))
            for step in f.explanation[:3]:
                print(f"      {step[:200]}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
