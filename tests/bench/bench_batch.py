"""Batch throughput: keyed shafts at default accuracy, sections per second per core.

Writes N shape files of keyed shafts (DIN 6885-1 keys from the table, diameters
spread over 20-60 mm: invented examples) and runs ``soapfilm batch FILES --quiet
--json OUT --jobs J`` as a user does, for J = 1 and J = the number of cores,
``--runs`` times each.  Reported, median and spread:

* wall: sections / (wall time x J), what the user sees on an idle machine;
* CPU: sections / CPU seconds of the whole process tree (the command, the fork
  server, the workers: psutil polls them every 20 ms), which a busy shared
  machine does not inflate the way it inflates wall time.

``--profile`` also runs the jobs in this process under cProfile (CPU time) and
splits it: the two linear solves (of them SuperLU's factorisation), assembly and
the rest of the fields, meshing and refinement, the peak, reading and building
the section, the rest of the analysis and of the row.

    python tests/bench/bench_batch.py [--sections 20] [--runs 3] [--profile]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DIAMETERS = (20, 22, 24, 25, 26, 28, 30, 32, 35, 36, 38, 40, 42, 45, 48, 50, 52, 55, 58, 60)


def write_sections(folder: Path, n: int) -> list[str]:
    files = []
    for i in range(n):
        d = DIAMETERS[i % len(DIAMETERS)] + (i // len(DIAMETERS))  # distinct sections
        f = folder / f"keyed-{i:03d}-d{d}.toml"
        f.write_text(f'title = "keyed shaft {d}"\nunits = "mm"\n\n[section]\n'
                     f'kind = "keyed_shaft"\ndiameter = {d}\n')
        files.append(str(f))
    return files


def run_tree(cmd: list[str]) -> tuple[float, float | None]:
    """Wall time and CPU time of a command and every process under it."""
    try:
        import psutil
    except ImportError:
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        return time.perf_counter() - t0, None
    t0 = time.perf_counter()
    proc = psutil.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    seen: dict[int, float] = {}
    while proc.poll() is None:
        try:
            procs = [proc, *proc.children(recursive=True)]
        except psutil.Error:
            procs = []
        for p in procs:
            try:
                c = p.cpu_times()
                seen[(p.pid, p.create_time())] = c.user + c.system
            except psutil.Error:
                pass
        time.sleep(0.02)
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"batch failed: {proc.stderr.read().decode()[-2000:]}")
    return wall, sum(seen.values())


def profile_split(files: list[str]) -> None:
    import cProfile
    import pstats

    from soapfilm.batch import Job, run_job

    jobs = [Job(f, Path(f), {"tol": "auto"}, {"file": f}) for f in files]
    run_job(jobs[0])  # imports and first calls, as a warm worker has them
    prof = cProfile.Profile(time.process_time)
    t0 = time.process_time()
    prof.enable()
    for job in jobs:
        run_job(job)
    prof.disable()
    total = time.process_time() - t0
    stats = pstats.Stats(prof).stats

    def cum(name: str, file_part: str = "") -> float:
        return sum(v[3] for (f, _, fn), v in stats.items() if fn == name and file_part in f)

    fields = cum("solve_fields", "solve.py")
    solves = cum("solve_spd", "linsolve.py")
    factor = cum("<built-in method scipy.sparse.linalg._dsolve._superlu.gstrf>")
    blas = cum("one_blas_thread", "linsolve.py")
    mesh = cum("mesh_profile", "mesh.py") + cum("refined", "mesh.py")
    peak = cum("boundary_peak", "solve.py")
    section = cum("_section", "batch.py")
    analyse = cum("analyse", "solve.py")
    rows = [
        ("linear solves (solve_spd)", solves),
        ("  of which SuperLU factorisation", factor),
        ("BLAS thread limit set per call (threadpoolctl; all calls, in both rows above)", blas),
        ("assembly, bounds, indicators (rest of solve_fields)", fields - solves),
        ("mesh and refinement (Triangle, curves)", mesh),
        ("peak (boundary_peak)", peak),
        ("rest of the adaptive loop", analyse - fields - mesh - peak),
        ("reading and building the section", section),
        ("rest of the row", total - analyse - section),
    ]
    print(f"\nCPU split of {len(jobs)} warm jobs in one process ({total:.2f} s, "
          f"{total / len(jobs):.3f} s per section):\n")
    print("| part | CPU [s] | share |")
    print("| --- | ---: | ---: |")
    for name, t in rows:
        print(f"| {name} | {t:.2f} | {t / total:.0%} |")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sections", type=int, default=20)
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--profile", action="store_true")
    args = ap.parse_args()
    cores = os.cpu_count() or 1
    print(f"load average at start: {os.getloadavg()[0]:.2f} on {cores} cores; "
          f"{args.sections} keyed shafts, default accuracy, {args.runs} runs each\n")
    print("| --jobs | wall [s] median (min-max) | sections/s/core by wall | CPU [s] median | "
          "sections per CPU-second (min-max) |")
    print("| ---: | --- | --- | ---: | --- |")
    with tempfile.TemporaryDirectory() as tmp:
        files = write_sections(Path(tmp), args.sections)
        out = str(Path(tmp) / "rows.json")
        for jobs in sorted({1, cores}):
            walls, cpus = [], []
            for _ in range(args.runs):
                w, c = run_tree([sys.executable, "-m", "soapfilm", "batch", *files, "--quiet",
                                 "--jobs", str(jobs), "--json", out])
                walls.append(w)
                cpus.append(c)
            rate = [args.sections / (w * jobs) for w in walls]
            cpu_text = rate_cpu = "-"
            if None not in cpus:
                per_cpu = [args.sections / c for c in cpus]
                cpu_text = f"{statistics.median(cpus):.1f}"
                rate_cpu = (f"{statistics.median(per_cpu):.2f} "
                            f"({min(per_cpu):.2f}-{max(per_cpu):.2f})")
            print(f"| {jobs} | {statistics.median(walls):.1f} ({min(walls):.1f}-{max(walls):.1f}) "
                  f"| {statistics.median(rate):.2f} ({min(rate):.2f}-{max(rate):.2f}) | "
                  f"{cpu_text} | {rate_cpu} |", flush=True)
        if args.profile:
            profile_split(files)


if __name__ == "__main__":
    main()
