"""Fuzzed user files at benchmark size: tap tables, readings and zeros, test sheets.

Runs the strategies of ``tests/test_fuzz_inputs.py`` (Hypothesis, derandomized, no shrinking) for N generated
cases per family, each under the tests' time limit, and prints per family: cases run, valid results, clean
InputErrors, bugs (any other exception, a message that breaks the rule, or a time-out) and the slowest case.
The summary goes to ``results/fuzz_inputs.json`` (variant ``default``); the first few bugs of each family, with
their cases, to ``out/fuzz_inputs_bugs.txt``.  All generated data is invented.

Usage: ``python benchmarks/fuzz_inputs.py [N]`` (default 1000 per family).
"""

from __future__ import annotations

import re
import shutil
import sys
import tempfile
import time
import traceback
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path[:0] = [str(HERE.parent), str(HERE), str(HERE.parent / "tests")]  # this checkout's package first

from hypothesis import Phase, given, settings  # noqa: E402

import test_fuzz_inputs as fz  # noqa: E402
from results import raw_path, record  # noqa: E402

FAMILIES = {
    "tap_tables": (fz.tap_tables(), fz.check_taps, lambda d: d),
    "readings_and_zeros": (fz.readings_cases(), fz.check_readings, lambda d: d),
    "test_sheets": (fz.sheet_cases(), fz.check_sheet, fz.sheet_folder),
}


def _signature(exc: BaseException) -> str:
    """What kind of bug: the exception type and where in meshpress it was raised (or the broken rule)."""
    if isinstance(exc, AssertionError):  # the message without its file, numbers and quoted values
        msg = re.sub(r"'[^']*'|\"[^\"]*\"|\S*/\S*|\d+", "_", str(exc).splitlines()[0] if str(exc) else "")
        return "rule broken: " + (msg[:100] or "result check")
    frames = [f for f in traceback.extract_tb(exc.__traceback__) if "meshpress" in f.filename]
    where = f"{Path(frames[-1].filename).name}:{frames[-1].name}" if frames else "?"
    return f"{type(exc).__name__} in {where}"


def run_family(name: str, n: int) -> tuple[dict, list]:
    """Generate ``n`` cases of one family and count their outcomes."""
    strategy, check, prepare = FAMILIES[name]
    counts = {"cases": 0, "valid": 0, "input_error": 0, "bugs": 0, "timeouts": 0, "slowest_s": 0.0}
    kinds = {}
    bugs = []
    folder = Path(tempfile.mkdtemp(prefix=f"meshpress-fuzz-{name}-"))
    work = prepare(folder)

    @settings(fz.FUZZ, max_examples=n, phases=[Phase.generate])
    @given(case=strategy)
    def one(case):
        counts["cases"] += 1
        t0 = time.perf_counter()
        try:
            counts[check(case, work)] += 1
        except fz.CaseTimeout:
            counts["timeouts"] += 1
            counts["bugs"] += 1
            bugs.append((repr(case)[:2000], "time-out"))
        except Exception as exc:  # a bug: anything but a clean outcome, counted and kept, then on to the next case
            counts["bugs"] += 1
            kinds[_signature(exc)] = kinds.get(_signature(exc), 0) + 1
            bugs.append((repr(case)[:2000], traceback.format_exc(limit=4)[-3000:]))
        counts["slowest_s"] = max(counts["slowest_s"], time.perf_counter() - t0)

    t0 = time.perf_counter()
    try:
        one()
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    counts["wall_s"] = round(time.perf_counter() - t0, 1)
    counts["bug_kinds"] = dict(sorted(kinds.items(), key=lambda kv: -kv[1]))
    counts["slowest_s"] = round(counts["slowest_s"], 3)
    return counts, bugs


def main(argv) -> int:
    n = int(argv[1]) if len(argv) > 1 else 1000
    summary, report = {"cases_per_family": n}, []
    print(f"{'family':<20}{'cases':>7}{'valid':>7}{'InputError':>12}{'bugs':>6}{'slowest s':>11}{'wall s':>8}")
    for name in FAMILIES:
        c, bugs = run_family(name, n)
        summary[name] = c
        print(f"{name:<20}{c['cases']:>7}{c['valid']:>7}{c['input_error']:>12}{c['bugs']:>6}"
              f"{c['slowest_s']:>11.3f}{c['wall_s']:>8.1f}")
        for kind, k in c["bug_kinds"].items():
            print(f"    {k:>5} x {kind}")
        report += [f"== {name}: {case}\n{tb}\n" for case, tb in bugs[:20]]
    raw_path("fuzz_inputs_bugs.txt").write_text("\n".join(report) or "no bugs\n")
    print(f"results: {record('fuzz_inputs', 'default', summary)}")
    return 1 if any(summary[f]["bugs"] for f in FAMILIES) else 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
