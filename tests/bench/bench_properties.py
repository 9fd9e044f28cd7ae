"""Property checks of tests/test_properties.py on many random sections (10 000 by default).

The same section strategy and checks as the CI tests, with random seeds and in
recording mode: a violated property does not stop the run, it is counted, and the
worst margin of every property is reported with the section that reached it.

Examples are split over the checks (shares below) and run in chunks of ``--chunk``
examples, each chunk with its own hypothesis seed, on ``--workers`` processes.
When ``--minutes`` have passed no new chunk starts; the summary says how many
examples ran.  Every failure is printed with its chunk (check, seed): replay it with
hypothesis's shrinking, which prints the smallest failing section:

    python tests/bench/bench_properties.py [--examples 10000] [--workers 2] [--minutes 15]
    python tests/bench/bench_properties.py --replay motion:123456:50

Margins (see tests/test_properties.py): relative violations, <= the limit must hold
(negative: the property holds with room); for the peaks, the difference over the
sum of the two estimated errors (<= 1 must hold).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
import time
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from dataclasses import dataclass, field
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from hypothesis import Phase, given, reject, seed, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

import test_properties as tp  # noqa: E402

#: share of the examples per check, and what each example solves
CHECKS = {
    "bounds": 0.30,  # one coarse solve
    "motion": 0.25,  # two coarse solves (+ the single-solve peak comparison)
    "scaling": 0.15,  # three coarse solves
    "determinism": 0.15,  # two coarse solves
    "adaptive": 0.10,  # two adaptive quadratic solves, tol 1e-2
    "adaptive-smooth": 0.05,  # the same on sections without sharp re-entrant corners
}
CAP = tp.BENCH_MAX_ELEMENTS
ADAPTIVE_TOL = 1e-2


@dataclass
class Tally:
    """What one chunk (or the whole run) saw for one check."""

    check: str
    examples: int = 0
    skipped: int = 0  # the mesh would be above the element cap
    seconds: float = 0.0
    elements: list = field(default_factory=list)
    worst: dict = field(default_factory=dict)  # margin name -> (value, limit, case repr, params)
    failures: dict = field(default_factory=dict)  # margin name -> count
    seen: dict = field(default_factory=dict)  # record-only margin name -> count of value > 0
    keys: set = field(default_factory=set)  # examples seen in this chunk
    examples_failed: list = field(default_factory=list)  # (names, case repr, params, seed)
    kept: dict = field(default_factory=dict)  # margin name -> failing examples kept
    coverage: dict = field(default_factory=lambda: {
        "size_min": math.inf, "size_max": 0.0, "aspect_min": 1.0, "gap_min": math.inf,
        "with_holes": 0})

    def record(self, case, params, outcome, seconds, chunk_seed):
        key = hash((repr(case), params))
        if key in self.keys:
            return  # hypothesis ran this example before: count it once
        self.keys.add(key)
        self.examples += 1
        self.seconds += seconds
        self.elements.append(outcome.elements)
        cov = self.coverage
        cov["size_min"] = min(cov["size_min"], case.size)
        cov["size_max"] = max(cov["size_max"], case.size)
        cov["aspect_min"] = min(cov["aspect_min"], case.aspect)
        if case.gaps:
            cov["with_holes"] += 1
            cov["gap_min"] = min(cov["gap_min"], min(case.gaps))
        bad = []
        for m in outcome.margins:
            name = m.name.split(" (differ")[0]
            value = float(m.value)
            if name not in self.worst or not value <= self.worst[name][0]:
                self.worst[name] = (value, m.limit, repr(case), params)
            if m.limit == math.inf and value > 0:
                self.seen[name] = self.seen.get(name, 0) + 1
            if not m.ok:
                self.failures[name] = self.failures.get(name, 0) + 1
                bad.append(m.name)
        for name in bad:  # the first three of every kind of failure
            if self.kept.get(name, 0) < 3:
                self.kept[name] = self.kept.get(name, 0) + 1
                self.examples_failed.append(([name] + [b for b in bad if b != name], repr(case),
                                             params, chunk_seed))
                break

    def merge(self, other: Tally) -> None:
        self.examples += other.examples
        self.skipped += other.skipped
        self.seconds += other.seconds
        self.elements += other.elements
        for k, v in other.worst.items():
            if k not in self.worst or not v[0] <= self.worst[k][0]:
                self.worst[k] = v
        for k, n in other.failures.items():
            self.failures[k] = self.failures.get(k, 0) + n
        for k, n in other.seen.items():
            self.seen[k] = self.seen.get(k, 0) + n
        for entry in other.examples_failed:
            name = entry[0][0]
            if self.kept.get(name, 0) < 3:
                self.kept[name] = self.kept.get(name, 0) + 1
                self.examples_failed.append(entry)
        for k in ("size_min", "aspect_min", "gap_min"):
            self.coverage[k] = min(self.coverage[k], other.coverage[k])
        self.coverage["size_max"] = max(self.coverage["size_max"], other.coverage["size_max"])
        self.coverage["with_holes"] += other.coverage["with_holes"]


def _strategy(check: str):
    if check in ("bounds", "determinism"):
        return st.tuples(tp.sections(), tp.orders, tp.coarseness)
    if check == "motion":
        return st.tuples(tp.sections(), tp.orders, tp.coarseness, tp.motions)
    if check == "scaling":
        return st.tuples(tp.sections(), tp.orders, tp.coarseness, tp.powers, tp.factors)
    if check == "adaptive":
        return st.tuples(tp.sections(), tp.motions)
    if check == "adaptive-smooth":
        return st.tuples(tp.sections(max_holes=2, smooth=True), tp.motions)
    raise ValueError(check)


def _outcome(check: str, args: tuple, loop_order):
    if check == "bounds":
        return tp.check_bounds(*args, CAP)
    if check == "determinism":
        return tp.check_determinism(*args, CAP)
    if check == "motion":
        case, order, coarse, motion = args
        return tp.check_motion(case, order, coarse, CAP, motion, loop_order, peaks=True)
    if check == "scaling":
        return tp.check_scaling(*args[:3], CAP, *args[3:], peaks=True)
    case, motion = args
    return tp.check_adaptive_peak(case, 2, ADAPTIVE_TOL, CAP, motion, loop_order)


def run_chunk(check: str, chunk_seed: int, n: int, strict: bool = False) -> Tally:
    """``n`` examples of one check with one seed; ``strict``: stop at the first failure
    and let hypothesis shrink it (``--replay``)."""
    tally = Tally(check)
    phases = (Phase.generate, Phase.shrink) if strict else (Phase.generate,)

    @seed(chunk_seed)
    @settings(tp.CI, derandomize=False, max_examples=n, phases=phases)
    @given(_strategy(check), st.data())
    def body(args, data):
        case = args[0]
        loop_order = data.draw(tp.loop_orders(case), label="loop order")
        params = repr((args[1:], loop_order))
        t = time.perf_counter()
        try:
            outcome = _outcome(check, args, loop_order)
        except Exception as exc:  # a valid section must not raise: record it as a failure
            if strict:
                raise
            outcome = tp.Outcome([tp.Margin(f"raised {type(exc).__name__}: {exc}"[:200], math.inf,
                                            0.0)], 0)
        if outcome is None:
            tally.skipped += 1
            reject()
        if strict:
            tp.run(outcome)
        tally.record(case, params, outcome, time.perf_counter() - t, chunk_seed)

    body()
    return tally


def plan(examples: int, chunk: int, base_seed: int) -> list[tuple[str, int, int]]:
    """Chunks (check, seed, n), interleaved so that a run cut short keeps the shares."""
    counts = {c: round(share * examples) for c, share in CHECKS.items()}
    queues = {c: [] for c in CHECKS}
    for i, c in enumerate(CHECKS):
        left, k = counts[c], 0
        while left > 0:
            n = min(chunk, left)
            queues[c].append((c, base_seed * 1_000_003 + i * 10_007 + k, n))
            left -= n
            k += 1
    out = []
    while any(queues.values()):
        # the check furthest behind its share goes next
        done = {c: sum(n for cc, _, n in out if cc == c) / max(counts[c], 1) for c in CHECKS}
        c = min((c for c in CHECKS if queues[c]), key=lambda c: done[c])
        out.append(queues[c].pop(0))
    return out


def _fmt(v: float) -> str:
    return f"{v:.2e}" if math.isfinite(v) else str(v)


def report(tallies: dict, wall: float, planned: int, workers: int) -> str:
    lines = []
    total = sum(t.examples for t in tallies.values())
    fails = sum(bool(t.failures) for t in tallies.values())
    lines.append(f"examples run: {total} of {planned} planned, in {wall / 60:.1f} min wall "
                 f"({workers} workers); checks with failures: {fails}")
    for c, t in tallies.items():
        if not t.examples:
            continue
        el = sorted(t.elements)
        cov = t.coverage
        lines.append("")
        lines.append(f"[{c}] {t.examples} examples, {t.skipped} skipped (mesh above {CAP} "
                     f"elements), {t.seconds:.0f} s of solving ({t.seconds / t.examples:.2f} s "
                     f"each), elements median {el[len(el) // 2]} max {el[-1]}")
        lines.append(f"    sizes {cov['size_min']:.1e} .. {cov['size_max']:.1e}, aspect down to "
                     f"{cov['aspect_min']:.1e}, {cov['with_holes']} with holes, smallest gap "
                     f"{cov['gap_min']:.1e} of the size")
        for name, (value, limit, _, _) in sorted(t.worst.items()):
            n = t.failures.get(name, 0)
            if limit == math.inf:  # for the record, not a property
                n = t.seen.get(name, 0)
                lines.append(f"    {name:<48} seen in {n} ({100 * n / t.examples:.2f} %)")
                continue
            lines.append(f"    {name:<48} worst {_fmt(value):>10} (limit {limit:g})  "
                         f"failures {n} ({100 * n / t.examples:.2f} %)")
        for bad, case, params, s in t.examples_failed:
            lines.append(f"    FAILED {bad} chunk seed {s} params {params}\n      {case}")
    return "\n".join(lines)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--examples", type=int, default=10_000)
    ap.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1))
    ap.add_argument("--minutes", type=float, default=15.0)
    ap.add_argument("--chunk", type=int, default=50)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--json", type=Path, help="write the tallies here")
    ap.add_argument("--only", choices=list(CHECKS), help="run the chunks of this check only")
    ap.add_argument("--replay", help="CHECK:SEED:N - rerun one chunk, stop and shrink at a failure")
    args = ap.parse_args(argv)
    if args.replay:
        check, s, n = args.replay.split(":")
        try:
            t = run_chunk(check, int(s), int(n), strict=True)
        except AssertionError:
            print("the smallest failing example is printed above", file=sys.stderr)
            return 1
        print(report({check: t}, t.seconds, int(n), 1))
        return 0
    chunks = [c for c in plan(args.examples, args.chunk, args.seed)
              if args.only is None or c[0] == args.only]
    tallies = {c: Tally(c) for c in CHECKS}
    t0 = time.perf_counter()
    deadline = t0 + 60.0 * args.minutes
    with ProcessPoolExecutor(args.workers) as pool:
        todo, running = list(chunks), set()
        while todo or running:
            while todo and len(running) < 2 * args.workers and time.perf_counter() < deadline:
                running.add(pool.submit(run_chunk, *todo.pop(0)))
            if not running:
                break
            done, running = wait(running, return_when=FIRST_COMPLETED)
            for f in done:
                t = f.result()
                tallies[t.check].merge(t)
            if time.perf_counter() >= deadline:
                todo.clear()
            ran = sum(t.examples for t in tallies.values())
            print(f"\r{ran} examples, {(time.perf_counter() - t0) / 60:.1f} min", end="",
                  file=sys.stderr, flush=True)
    print(file=sys.stderr)
    wall = time.perf_counter() - t0
    print(report(tallies, wall, args.examples, args.workers))
    if args.json:
        args.json.write_text(json.dumps({c: t.__dict__ for c, t in tallies.items()}, indent=1,
                                        default=str))
    return 0


if __name__ == "__main__":
    sys.exit(main())
