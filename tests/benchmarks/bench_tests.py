"""Test-suite benchmark: wall time and CPU time of the default test run (issue 8: under 60 s of CPU).

Runs the default suite once (``python -m pytest -q -p no:cacheprovider`` with the project's
``addopts``, so the slow checks are left out; ``--slow`` runs ``-m slow`` instead) as a child
process and reports, from ``resource.getrusage(RUSAGE_CHILDREN)`` around it:

* wall time, and CPU time (user + system) of the whole run: pytest itself plus every process it
  started and waited for (command-line subprocesses, worker pools, each loading numpy and numba);
* the split between the pytest process itself (its ``RUSAGE_SELF`` at the end) and its children,
  and how much of pytest's own CPU went into collection (imports, doctest modules);
* the number of tests passed, failed and skipped;
* with ``--top N``, the N files and N tests that cost the most CPU (setup, call and teardown
  together; a module-wide fixture is charged to the first test that uses it), so the next lever
  is easy to find.

Collection depends on bytecode caching: with ``PYTHONDONTWRITEBYTECODE`` set (as in some
sandboxes) every run compiles the package and rewrites the tests' asserts again; the report says so.

The machine's load average is printed beside the figures: CPU time is far less sensitive to other
work than wall time, but a busy machine still inflates both (caches, frequency); measure on a quiet
machine for the figures in the README.

Writes JSON (--json, default bench-out/tests.json).

Run: python3 tests/benchmarks/bench_tests.py [--top 30] [--slow] [-- extra pytest arguments]
"""

from __future__ import annotations

import argparse
import collections
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

__all__ = ["CpuRecorder", "main"]

ROOT = Path(__file__).resolve().parents[2]
GOAL_CPU_S = 60.0


def _cpu(usage) -> float:
    return usage.ru_utime + usage.ru_stime


class CpuRecorder:
    """A pytest plugin: CPU seconds of each test (its own process and its waited-for children)."""

    def __init__(self, path: str):
        self.path = path
        self.tests: dict[str, dict] = {}
        self.counts: collections.Counter = collections.Counter()
        self.collection_cpu_s = 0.0

    def pytest_collection_finish(self, session):
        self.collection_cpu_s = _cpu(resource.getrusage(resource.RUSAGE_SELF))

    @pytest.hookimpl(hookwrapper=True)
    def pytest_runtest_protocol(self, item, nextitem):
        own = _cpu(resource.getrusage(resource.RUSAGE_SELF))
        children = _cpu(resource.getrusage(resource.RUSAGE_CHILDREN))
        start = time.perf_counter()
        yield
        self.tests[item.nodeid] = {
            "self_cpu_s": _cpu(resource.getrusage(resource.RUSAGE_SELF)) - own,
            "children_cpu_s": _cpu(resource.getrusage(resource.RUSAGE_CHILDREN)) - children,
            "wall_s": time.perf_counter() - start,
        }

    def pytest_runtest_logreport(self, report):
        if report.when == "call" or report.outcome != "passed":
            self.counts[report.outcome] += 1

    def pytest_sessionfinish(self, session, exitstatus):
        Path(self.path).write_text(json.dumps({
            "self_cpu_s": _cpu(resource.getrusage(resource.RUSAGE_SELF)),
            "children_cpu_s": _cpu(resource.getrusage(resource.RUSAGE_CHILDREN)),
            "collection_cpu_s": self.collection_cpu_s,
            "counts": dict(self.counts),
            "tests": self.tests,
        }))


def _child(record_path: str, pytest_args: list[str]) -> int:
    """Inside the child process: pytest with the recorder."""
    return pytest.main(pytest_args, plugins=[CpuRecorder(record_path)])


def _by_file(tests: dict) -> collections.Counter:
    totals: collections.Counter = collections.Counter()
    for nodeid, figures in tests.items():
        totals[nodeid.split("::")[0]] += figures["self_cpu_s"] + figures["children_cpu_s"]
    return totals


def _print_top(tests: dict, top: int) -> None:
    print(f"\nthe {top} files that cost the most CPU (s):")
    for name, cpu in _by_file(tests).most_common(top):
        print(f"  {cpu:7.2f}  {name}")
    print(f"\nthe {top} tests that cost the most CPU (s, of which in children):")
    ranked = sorted(tests.items(), key=lambda kv: -(kv[1]["self_cpu_s"] + kv[1]["children_cpu_s"]))
    for nodeid, figures in ranked[:top]:
        print(f"  {figures['self_cpu_s'] + figures['children_cpu_s']:7.2f}  ({figures['children_cpu_s']:5.2f})  {nodeid}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--slow", action="store_true", help="run the slow part (-m slow) instead")
    parser.add_argument("--top", type=int, default=0, help="list the N costliest files and tests")
    parser.add_argument("--json", default="bench-out/tests.json", help="where to write the figures")
    parser.add_argument("pytest_args", nargs="*", help="more pytest arguments (after --)")
    options = parser.parse_args()

    pytest_args = ["-q", "-p", "no:cacheprovider", *(["-m", "slow"] if options.slow else []), *options.pytest_args]
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")])))
    with tempfile.TemporaryDirectory(prefix="emulate-bench-tests-") as folder:
        record_path = os.path.join(folder, "record.json")
        code = (f"import sys; sys.path.insert(0, {str(Path(__file__).parent)!r}); import bench_tests; "
                f"sys.exit(bench_tests._child({record_path!r}, {pytest_args!r}))")
        load_before = os.getloadavg()
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        start = time.perf_counter()
        status = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env,
                                stdout=subprocess.DEVNULL).returncode
        wall_s = time.perf_counter() - start
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        load_after = os.getloadavg()
        record = json.loads(Path(record_path).read_text()) if os.path.exists(record_path) else {}

    cpu_s = _cpu(after) - _cpu(before)
    run = "the slow part (-m slow)" if options.slow else "the default run"
    print(f"{run}: pytest exit status {status}; tests {record.get('counts', {})}")
    print(f"wall {wall_s:.1f} s; CPU (user + system, pytest and every child) {cpu_s:.1f} s"
          f" (user {after.ru_utime - before.ru_utime:.1f}, system {after.ru_stime - before.ru_stime:.1f})")
    if record:
        print(f"  pytest itself {record['self_cpu_s']:.1f} s (collection {record['collection_cpu_s']:.1f} s),"
              f" processes it started {record['children_cpu_s']:.1f} s")
    if not options.slow:
        print(f"goal: under {GOAL_CPU_S:.0f} s of CPU: {'met' if cpu_s < GOAL_CPU_S else 'NOT met'}")
    if os.environ.get("PYTHONDONTWRITEBYTECODE"):
        print("note: PYTHONDONTWRITEBYTECODE is set: every run compiles the package and rewrites the tests'"
              " asserts again (about 3-4 s more collection CPU than with bytecode caching)")
    print(f"load average (1, 5, 15 min) before {load_before[0]:.2f} {load_before[1]:.2f} {load_before[2]:.2f},"
          f" after {load_after[0]:.2f} {load_after[1]:.2f} {load_after[2]:.2f} on {os.cpu_count()} CPUs")
    if record and options.top:
        _print_top(record["tests"], options.top)

    out = Path(options.json)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps({"run": run, "status": status, "wall_s": wall_s, "cpu_s": cpu_s,
                               "load_before": load_before, "load_after": load_after, **record}, indent=1))
    return 0 if status == 0 else 1


if __name__ == "__main__":
    sys.exit(main())
