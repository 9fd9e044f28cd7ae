"""Benchmark: the resource guard's estimates against what meshing and solving take.

Run:  python tests/bench/bench_memory.py [--part elements|memory|adaptive|hostile|all]

* ``elements``: estimated elements (:func:`soapfilm.resources.estimate_mesh`) against
  Triangle's count, on closed-form and trade sections, thin slivers, dense
  point lists and many holes, at several element sizes;
* ``memory``: peak resident memory of ``analyse`` on uniform meshes, linear
  and quadratic elements, each in a fresh process: bytes per element above
  the process with its libraries loaded, against the model
  (:func:`soapfilm.resources.memory_needed`);
* ``adaptive``: the same for adaptive runs (the loop holds the last mesh's
  fields while it solves the next);
* ``hostile``: the issue-11 inputs through the command line under
  ``/usr/bin/time -v``: exit status, wall time, peak memory, the message.

Not a test: the figures go into DEVELOPERS.md ("Resource guard").
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

CHILD = r"""
import json, resource, sys, time
import numpy as np
import scipy.sparse.linalg, pyamg, shapely, triangle  # the libraries a solve loads
from soapfilm import Profile, analyse, read_section
from soapfilm.shapes.registry import build
import soapfilm.fem.p2, soapfilm.adapt
kind, h, order, tol = sys.argv[1], float(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4])
if kind == "square":
    prof = Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]])
else:
    prof = build(kind, {"diameter": 40}, units="mm")
base = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
t = time.perf_counter()
if tol > 0:
    r = analyse(prof, tol=tol, order=order, memory="20 GB", max_elements=2_000_000)
else:
    r = analyse(prof, mesh_size=h, order=order, memory="20 GB")
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({"elements": int(r.mesh.nelements), "base": base, "peak": peak,
                  "seconds": time.perf_counter() - t,
                  "steps": len(r.refinement)}))
"""


def child(kind: str, h: float, order: int, tol: float = 0.0) -> dict:
    out = subprocess.run([sys.executable, "-c", CHILD, kind, str(h), str(order), str(tol)],
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def part_memory() -> None:
    from soapfilm.resources import memory_needed

    print("\n## memory per element, uniform meshes (fresh process each)\n")
    print("| section | order | elements | base MB | peak MB | bytes/element above base | "
          "model MB | model / peak |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- |")
    for kind, sizes in (("square", (0.2, 0.1, 0.05, 0.025)), ("keyed_shaft", (0.4, 0.1))):
        for order in (1, 2):
            for h in sizes:
                d = child(kind, h, order)
                per = (d["peak"] - d["base"]) / d["elements"]
                model = memory_needed(d["elements"])
                print(f"| {kind} | {order} | {d['elements']:,} | {d['base'] / 1e6:.0f} | "
                      f"{d['peak'] / 1e6:.0f} | {per:,.0f} | {model / 1e6:.0f} | "
                      f"{model / d['peak']:.2f} |", flush=True)


def part_adaptive() -> None:
    from soapfilm.resources import memory_needed

    print("\n## adaptive runs (fresh process each)\n")
    print("| section | order | tol | steps | final elements | peak MB | model MB (final) | "
          "model / peak | seconds |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- | --- |")
    for kind, order, tol in (("keyed_shaft", 2, 1e-5), ("keyed_shaft", 2, 1e-6),
                             ("keyed_shaft", 1, 1e-4), ("square", 1, 1e-4)):
        d = child(kind, 0.0, order, tol)
        model = memory_needed(d["elements"])
        print(f"| {kind} | {order} | {tol:g} | {d['steps']} | {d['elements']:,} | "
              f"{d['peak'] / 1e6:.0f} | {model / 1e6:.0f} | {model / d['peak']:.2f} | "
              f"{d['seconds']:.1f} |", flush=True)


def _sections():
    import numpy as np

    from soapfilm import Profile, read_section
    from soapfilm.shapes.registry import build

    here = Path(__file__).resolve().parents[2] / "shapes"

    def tail(w):
        return Profile.from_loops([[(0, 0), (10, 0), (10, 5 - w / 2), (15, 5 - w / 2),
                                    (15, 5 + w / 2), (10, 5 + w / 2), (10, 10), (0, 10)]])

    def ngon(n):
        a = 2 * np.pi * np.arange(n) / n
        return Profile.from_loops([np.column_stack([20 * np.cos(a), 20 * np.sin(a)])])

    def holes(n):
        k = math.ceil(math.sqrt(n))
        loops = [[(0, 0), (3 * k, 0), (3 * k, 3 * k), (0, 3 * k)]]
        for i in range(k):
            for j in range(k):
                if len(loops) <= n:
                    loops.append([(3 * i + 1, 3 * j + 1), (3 * i + 2, 3 * j + 1),
                                  (3 * i + 2, 3 * j + 2), (3 * i + 1, 3 * j + 2)])
        return Profile.from_loops(loops)

    return [
        ("square 10", Profile.from_loops([[(0, 0), (10, 0), (10, 10), (0, 10)]]), (1.0, 0.1)),
        ("sliver 1e-3 wide", tail(1e-3), (0.5, 0.1)),
        ("sliver 1e-4 wide", tail(1e-4), (0.5,)),
        ("keyed-shaft-40.txt (680 points)", read_section(here / "keyed-shaft-40.txt", "mm"),
         (4.0, 1.0, 0.2)),
        ("5000-gon, R 20", ngon(5000), (4.0, 1.0)),
        ("tube 40 x 0.1", build("tube", {"diameter": 40, "wall": 0.1}, units="mm"),
         (2.0, 0.5, 0.025)),
        ("keyed_shaft 40", build("keyed_shaft", {"diameter": 40}, units="mm"), (4.0, 1.0, 0.3)),
        ("pump-shaft-spline.toml", read_section(here / "pump-shaft-spline.toml", "mm"),
         (2.0, 0.5, 0.2)),
        ("256 square holes", holes(256), (2.0, 0.5)),
    ]


def part_elements() -> None:
    from soapfilm.mesh import default_mesh_size, mesh_profile
    from soapfilm.resources import estimate_mesh

    print("\n## estimated against actual elements (Triangle, pq30a)\n")
    print("| section | h | actual | estimate | ratio | area term | thin term | points term | "
          "estimate s | mesh s |")
    print("| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |")
    for name, prof, sizes in _sections():
        for h in (*sizes, default_mesh_size(prof)):
            t = time.perf_counter()
            e = estimate_mesh(prof, h)
            te = time.perf_counter() - t
            t = time.perf_counter()
            m = mesh_profile(prof, h, memory="20 GB")
            tm = time.perf_counter() - t
            print(f"| {name} | {h:.3g} | {m.nelements:,} | {e.elements:,.0f} | "
                  f"{e.elements / m.nelements:.2f} | {e.area_term:,.0f} | {e.thin_term:,.0f} | "
                  f"{e.points_term:,.0f} | {te:.3f} | {tm:.3f} |", flush=True)


def _hostile_files(d: Path) -> list[tuple[str, list[str]]]:
    import ezdxf

    (d / "tail.txt").write_text("0 0\n10 0\n10 4.99999995\n15 4.99999995\n15 5.00000005\n"
                                "10 5.00000005\n10 10\n0 10\n")
    (d / "far.txt").write_text("100000000000000 0\n100000000000010 0\n100000000000010 5\n"
                               "100000000000000 5\n")
    (d / "far.toml").write_text('units = "mm"\n[section]\nkind = "keyed_shaft"\ndiameter = 10\n'
                                "position = [1e14, 0]\n")
    (d / "chord.toml").write_text('units = "mm"\n[section]\nkind = "round"\ndiameter = 40\n'
                                  "[mesh]\nchord = 1e-12\n")
    k = 64
    lines = ["0 0", f"{3 * k} 0", f"{3 * k} {3 * k}", f"0 {3 * k}", ""]
    for i in range(k * k):
        x, y = 3 * (i // k) + 1, 3 * (i % k) + 1
        lines += [f"{x} {y}", f"{x + 1} {y}", f"{x + 1} {y + 1}", f"{x} {y + 1}", ""]
    (d / "holes4096.txt").write_text("\n".join(lines))
    doc = ezdxf.new()
    doc.units = 4
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (300, 0), (300, 300), (0, 300)], close=True)
    for i in range(9999):
        msp.add_circle((3 * (i // 100) + 1.5, 3 * (i % 100) + 1.5), 0.5)
    doc.saveas(d / "circles10k.dxf")
    doc = ezdxf.new()
    doc.units = 4
    for i in range(5000):
        a = 2 * math.pi * i / 5000
        doc.modelspace().add_line((0, 0), (10 * math.cos(a), 10 * math.sin(a)))
    doc.saveas(d / "star5000.dxf")
    doc = ezdxf.new()
    doc.units = 4
    blk = doc.blocks.new("LOOP")
    blk.add_circle((0, 0), 1)
    for i in range(10):
        blk.add_blockref("LOOP", (3 * i, 0))
    doc.modelspace().add_blockref("LOOP", (0, 0))
    doc.saveas(d / "selfblock.dxf")
    (d / "sweep.toml").write_text('units = "mm"\n[section]\nkind = "rectangle"\nwidth = 40\n'
                                  "height = 10\n")
    keyed = str(Path(__file__).resolve().parents[2] / "shapes" / "keyed-shaft-40.txt")
    return [
        ("square with a 1e-7 wide tail", ["solve", "tail.txt"]),
        ("10 x 5 rectangle at x = 1e14", ["solve", "far.txt"]),
        ("keyed shaft (exact curves) at x = 1e14", ["solve", "far.toml"]),
        ("[mesh] chord = 1e-12 on a round bar", ["solve", "chord.toml"]),
        ("--mesh-size 0.012 on keyed-shaft-40.txt", ["solve", keyed, "--mesh-size", "0.012"]),
        ("DXF block inserting itself 10 times", ["solve", "selfblock.dxf"]),
        ("4 096 holes", ["solve", "holes4096.txt"]),
        ("10 k circles", ["solve", "circles10k.dxf"]),
        ("5 000 lines meeting at one point", ["solve", "star5000.dxf"]),
        ("sweep --vary height=6:20:1000000", ["sweep", "sweep.toml", "--vary",
                                              "height=6:20:1000000"]),
    ]


def part_hostile() -> None:
    print("\n## hostile inputs (issue 11), command line under /usr/bin/time -v\n")
    print("| input | exit | wall s | peak MB | message |")
    print("| --- | --- | --- | --- | --- |")
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        for name, argv in _hostile_files(d):
            before = sorted(p.name for p in d.iterdir())
            t = time.perf_counter()
            proc = subprocess.run(["/usr/bin/time", "-v", "timeout", "-s", "KILL", "120",
                                   sys.executable, "-m", "soapfilm", *argv, "--quiet"],
                                  cwd=d, capture_output=True, text=True)
            wall = time.perf_counter() - t
            rss = next((int(line.split(":")[1]) for line in proc.stderr.splitlines()
                        if "Maximum resident set size" in line), 0)
            msg = [line for line in proc.stderr.splitlines() if line.startswith("soapfilm")]
            left = sorted(p.name for p in d.iterdir())
            extra = "" if left == before else f" (files left: {set(left) - set(before)})"
            text = (msg[0] if msg else "(no message)") + extra
            print(f"| {name} | {proc.returncode} | {wall:.1f} | {rss / 1024:.0f} | "
                  f"{text.replace('|', '/')} |", flush=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--part", default="all",
                    choices=("elements", "memory", "adaptive", "hostile", "all"))
    a = ap.parse_args()
    print(f"# bench_memory ({os.cpu_count()} cores, Python {sys.version.split()[0]})")
    for part in ("elements", "memory", "adaptive", "hostile"):
        if a.part in (part, "all"):
            globals()[f"part_{part}"]()


if __name__ == "__main__":
    main()
