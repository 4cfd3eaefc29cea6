"""The whole-pipeline oracle over many generated studies (issue 24, item 3).

The same generator and battery as tests/oracle/test_oracle.py, driven by
seeds instead of hypothesis: study number i is ``generate(SeedPicker(seed + i))``,
so every failing study is named by its seed and replayed with ``--replay SEED``.

    .venv/bin/python benchmarks/oracle_sweep.py                 # 2000 studies from seed 0
    .venv/bin/python benchmarks/oracle_sweep.py --count 200 --seed 5000
    .venv/bin/python benchmarks/oracle_sweep.py --replay 1234   # one study, every failure

Prints the studies made of each kind, the commands run, the studies that kept
every invariant, the failures by invariant with the first failing seeds, and
the elapsed time. Charts are drawn to SVG for one study in ``--charts-every``
(default 10; drawing is most of a report's time and no number passes through it).
"""
from __future__ import annotations

import argparse
import collections
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent / "tests" / "oracle"))

from oracle_battery import run_battery  # noqa: E402
from oracle_pickers import SeedPicker  # noqa: E402
from oracle_studies import KINDS, generate  # noqa: E402


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=2000, help="studies (default 2000)")
    parser.add_argument("--seed", type=int, default=0, help="first seed (default 0)")
    parser.add_argument("--kind", choices=KINDS, action="append",
                        help="only studies of this kind (may be repeated)")
    parser.add_argument("--charts-every", type=int, default=10, metavar="N",
                        help="draw the report's charts for one study in N (0: never)")
    parser.add_argument("--replay", type=int, metavar="SEED",
                        help="run one study and print its study file and every failure")
    parser.add_argument("--show", type=int, default=3, metavar="N",
                        help="failing seeds listed per invariant (default 3)")
    args = parser.parse_args(argv)
    if args.replay is not None:
        return _replay(args.replay)

    started = time.perf_counter()
    per_kind = collections.Counter()
    passed_kind = collections.Counter()
    by_invariant = collections.Counter()  # studies failing each invariant
    examples = collections.defaultdict(list)
    commands = 0
    seed, made = args.seed, 0
    with tempfile.TemporaryDirectory() as tmp:
        while made < args.count:
            generated = generate(SeedPicker(seed))
            if args.kind and generated.kind not in args.kind:
                seed += 1
                continue
            charts = bool(args.charts_every) and made % args.charts_every == 0
            outcome = run_battery(generated, Path(tmp) / f"s{seed}", charts=charts)
            per_kind[generated.kind] += 1
            commands += outcome.commands
            if outcome.ok:
                passed_kind[generated.kind] += 1
            for invariant in sorted({inv for inv, _, _ in outcome.failures}):
                by_invariant[invariant] += 1
                if len(examples[invariant]) < args.show:
                    first = next(f for f in outcome.failures if f[0] == invariant)
                    message = first[2].strip().splitlines()[-1][:160]
                    examples[invariant].append(f"seed {seed} ({generated.kind}, "
                                               f"{first[1]}): {message}")
            made += 1
            seed += 1
            if made % 100 == 0:
                print(f"... {made} studies, {sum(passed_kind.values())} passed, "
                      f"{time.perf_counter() - started:.0f} s", flush=True)
    elapsed = time.perf_counter() - started
    passed = sum(passed_kind.values())
    print(f"\nOracle sweep: {made} studies (seeds {args.seed}..{seed - 1}), {commands} "
          f"commands, {passed} passed every invariant, {made - passed} failed; "
          f"{elapsed:.0f} s ({elapsed / max(made, 1):.2f} s per study)")
    print(f"\n{'kind':<15}{'studies':>8}{'passed':>8}")
    for kind in KINDS:
        if per_kind[kind]:
            print(f"{kind:<15}{per_kind[kind]:>8}{passed_kind[kind]:>8}")
    print("\nfailures by invariant (studies), first failing seeds (replay: --replay SEED)")
    if not by_invariant:
        print("  none")
    for invariant, count in by_invariant.most_common():
        print(f"  {invariant:<16}{count:>6}")
        for line in examples[invariant]:
            print(f"      {line}")
    return 0 if passed == made else 1


def _replay(seed: int) -> int:
    generated = generate(SeedPicker(seed))
    print(f"seed {seed}: kind {generated.kind}, features {sorted(generated.features)}")
    print("--- study.toml ---")
    print(generated.study_text)
    with tempfile.TemporaryDirectory() as tmp:
        outcome = run_battery(generated, Path(tmp), charts=True)
    print(f"--- {outcome.commands} commands run ---")
    print(outcome.summary())
    return 0 if outcome.ok else 1


if __name__ == "__main__":
    sys.exit(main())
