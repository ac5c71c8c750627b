"""Wall time of ``meshpress demo`` (loads, bands and report on the bundled 40,000-face sample).

Runs, alternating, in one session: this checkout; this checkout with ``MESHPRESS_SERIAL=1`` (the bands map
drawn in the same process as the rest, see ``meshpress/aside.py``); and, with ``--before REV``, the
code of that revision (checked out into a temporary git worktree and run with ``python -m meshpress``).
Each run writes into an empty temporary folder.  The best and the median of ``--repeat`` runs are printed
and stored in ``benchmarks/results/bench_demo.json``.

    python benchmarks/bench_demo.py --before 5484765 --repeat 3
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

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))
from results import record  # noqa: E402


def one_run(src: Path, env_extra: dict) -> float:
    env = {**os.environ, **env_extra, "PYTHONPATH": str(src)}
    with tempfile.TemporaryDirectory() as d:
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "meshpress", "demo", "--out", "out"], cwd=d, env=env, check=True,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        return time.perf_counter() - t0


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--before", help="a git revision to compare with")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    cases = {"this version": (ROOT, {}), "this version, serial": (ROOT, {"MESHPRESS_SERIAL": "1"})}
    tmp = None
    if args.before:
        tmp = tempfile.mkdtemp(prefix="meshpress-before-")
        subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "--detach", tmp, args.before], check=True,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        cases[f"before ({args.before})"] = (Path(tmp), {})
    times = {k: [] for k in cases}
    try:
        one_run(ROOT, {})  # warm the file cache and the byte-code
        for _ in range(args.repeat):
            for name, (src, env) in cases.items():
                times[name].append(one_run(src, env))
                print(f"{name:28s} {times[name][-1]:6.2f} s", flush=True)
    finally:
        if tmp:
            subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", tmp], check=False)
    load = os.getloadavg()
    out = {k: {"best_s": min(v), "median_s": statistics.median(v), "runs_s": v} for k, v in times.items()}
    out["load_average_after"] = load
    out["cpus"] = os.cpu_count()
    print()
    for k, v in times.items():
        print(f"{k:28s} best {min(v):6.2f} s   median {statistics.median(v):6.2f} s")
    base = min(times["this version"])
    for k, v in times.items():
        if k != "this version":
            print(f"{k} / this version: {min(v) / base:.2f}x")
    print(f"load average after: {load[0]:.2f} on {os.cpu_count()} cores")
    record("bench_demo", "default", out)


if __name__ == "__main__":
    main()
