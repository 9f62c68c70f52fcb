"""Mutation testing of the numeric core (polarsvc/aero) with mutmut, bounded in time.

Not part of CI: install the extra (``pip install -e ".[mutation]"``), then from the checkout

    python benchmarks/mutation.py                       # rotation, characteristics, extension
    python benchmarks/mutation.py --modules rotation --budget-min 10 --children 2

Each module is mutated in turn (``mutmut run "polarsvc.aero.<module>*"``, configured under
``[tool.mutmut]`` in pyproject.toml: only polarsvc/aero is mutated and only tests/aero runs,
without the import-layering test, which starts a subprocess) until the time budget is spent;
then the script prints, per module and overall, the mutants killed (a test failed), timed out
(counted as detected), survived (no test failed) and not checked (budget spent), with the
score ``detected / (detected + survived)``. ``mutmut results`` and ``mutmut show <name>``
inspect the survivors afterwards. ``--resume`` keeps the results of an earlier run
(``mutants/``) and checks only the mutants without a result; by default the run starts
afresh. The tests run with the hypothesis profile ``mutation`` (20 examples per property,
``tests/conftest.py``) to keep the run within hours. ``--retest-survivors`` (implies
``--resume``) runs only the surviving mutants of the given modules again, against the current
tests (after tests were added to kill them).
"""

from __future__ import annotations

import argparse
import math
import os
import random
import shutil
import signal
import subprocess
import sys
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEFAULT_MODULES = ("rotation", "characteristics", "extension")
ALL_MODULES = ("rotation", "characteristics", "extension", "interpolation", "blade",
               "resample", "polar", "quality", "errors")
DETECTED = ("killed", "timeout")


def mutmut() -> list[str]:
    executable = Path(sys.executable).with_name("mutmut")
    if not executable.exists():
        sys.exit('mutmut is not installed: pip install -e ".[mutation]"')
    return [str(executable)]


def run_bounded(command: list[str], seconds: float) -> None:
    """Run ``command`` in its own process group; past ``seconds`` stop the whole group (mutmut
    and the mutant runs it forked), keeping what was recorded so far."""
    environment = {**os.environ, "POLARSVC_HYPOTHESIS_PROFILE": "mutation"}
    process = subprocess.Popen(command, cwd=ROOT, stdout=subprocess.DEVNULL,
                               stderr=subprocess.DEVNULL, start_new_session=True,
                               env=environment)
    try:
        process.wait(timeout=seconds)
    except subprocess.TimeoutExpired:
        os.killpg(process.pid, signal.SIGTERM)
        try:
            process.wait(timeout=30)
        except subprocess.TimeoutExpired:
            os.killpg(process.pid, signal.SIGKILL)
            process.wait()


def results() -> list[tuple[str, str, str]]:
    """(module, mutant name, state) of every aero mutant, from ``mutmut results --all true``."""
    answer = subprocess.run(
        [*mutmut(), "results", "--all", "true"], cwd=ROOT, capture_output=True, text=True,
        check=True,
    )
    rows = []
    for line in answer.stdout.splitlines():
        name, _, state = line.strip().rpartition(": ")
        parts = name.split(".")
        if len(parts) < 4 or parts[:2] != ["polarsvc", "aero"]:
            continue
        rows.append((parts[2], name, state.strip()))
    return rows


def states() -> dict[str, Counter]:
    """Mutant states per aero module."""
    counts: dict[str, Counter] = {}
    for module, _, state in results():
        counts.setdefault(module, Counter())[state] += 1
    return counts


def interval(detected: int, checked: int, unchecked: int) -> str:
    """For a module checked on a sample: the 95 % Wilson interval of its score (Wilson 1927,
    J. Am. Stat. Assoc. 22; the sample is drawn uniformly, so the score of the sample estimates
    that of the module)."""
    if not unchecked or not checked:
        return ""
    z = 1.959964
    p = detected / checked
    centre = (p + z * z / (2 * checked)) / (1 + z * z / checked)
    half = z * math.sqrt(p * (1 - p) / checked + z * z / (4 * checked**2)) / (1 + z * z / checked)
    return f"  sample: 95 % interval {100 * (centre - half):.1f}-{100 * (centre + half):.1f}%"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--modules", nargs="+", default=list(DEFAULT_MODULES),
                        choices=ALL_MODULES)
    parser.add_argument("--budget-min", type=float, default=25.0,
                        help="wall-clock budget of all runs together [min]")
    parser.add_argument("--children", type=int, default=2, help="parallel mutant runs")
    parser.add_argument("--resume", action="store_true", help="keep earlier results")
    parser.add_argument("--sample", type=int, default=0,
                        help="with --resume: check at most this many unchecked mutants per "
                             "module, drawn uniformly at random")
    parser.add_argument("--seed", type=int, default=20261202, help="seed of --sample")
    parser.add_argument("--retest-survivors", action="store_true",
                        help="run only the survivors of the modules again (keeps results)")
    args = parser.parse_args()
    if not (args.resume or args.retest_survivors):
        shutil.rmtree(ROOT / "mutants", ignore_errors=True)
    load = Path("/proc/loadavg").read_text().split()[:3] if Path("/proc/loadavg").exists() else []
    print(f"load average at start: {' '.join(load)}")
    deadline = time.monotonic() + 60.0 * args.budget_min
    spent: dict[str, float] = {}
    if args.retest_survivors:
        names = [name for module, name, state in results()
                 if module in args.modules and state == "survived"]
        print(f"retesting {len(names)} survivors")
        if names:
            run_bounded([*mutmut(), "run", "--max-children", str(args.children), *names],
                        max(deadline - time.monotonic(), 0.0))
    for module in [] if args.retest_survivors else args.modules:
        left = deadline - time.monotonic()
        if left <= 0:
            break
        start = time.monotonic()
        if args.resume:
            # mutmut reruns every mutant named on its command line, so a resumed run names
            # only the mutants that have no result yet
            targets = [name for owner, name, state in results()
                       if owner == module and state == "not checked"]
            if args.sample and len(targets) > args.sample:
                targets = sorted(random.Random(args.seed).sample(targets, args.sample))
        else:
            targets = [f"polarsvc.aero.{module}*"]
        if targets:
            run_bounded([*mutmut(), "run", "--max-children", str(args.children), *targets], left)
        spent[module] = time.monotonic() - start
    counts = states()
    total: Counter = Counter()
    print(f"{'module':<16}{'killed':>8}{'timeout':>9}{'survived':>10}{'unchecked':>11}"
          f"{'score':>8}{'minutes':>9}")
    for module in args.modules:
        c = counts.get(module, Counter())
        total.update(c)
        detected = sum(c[s] for s in DETECTED)
        checked = detected + c["survived"]
        score = f"{100.0 * detected / checked:.1f}%" if checked else "-"
        unchecked = sum(v for k, v in c.items() if k not in (*DETECTED, "survived"))
        print(f"{module:<16}{c['killed']:>8}{c['timeout']:>9}{c['survived']:>10}"
              f"{unchecked:>11}{score:>8}{spent.get(module, 0.0) / 60.0:>9.1f}"
              f"{interval(detected, checked, unchecked)}")
    detected = sum(total[s] for s in DETECTED)
    checked = detected + total["survived"]
    if checked:
        print(f"overall score of the checked mutants: {100.0 * detected / checked:.1f}% "
              f"({detected} of {checked})")


if __name__ == "__main__":
    main()
