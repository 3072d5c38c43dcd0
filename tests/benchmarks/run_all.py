"""Run every benchmark script in this folder and print their tables.

Usage, from the repository root::

    python tests/benchmarks/run_all.py           # full sizes (< 5 min on 2 cores)
    python tests/benchmarks/run_all.py --quick   # small sizes, the CI smoke run

Each ``bench_*.py`` runs in its own process (so peak-memory figures are not
mixed up) with ``--quick`` passed through. ``--jobs 2`` runs two scripts at a
time (for smoke runs; timings then compete for the cores); ``--timeout S``
stops a script after S seconds. The exit status is non-zero when any script
fails or is stopped; its error output is printed after its table.
"""

import argparse
import os
import platform
import subprocess
import sys
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]


def machine():
    """One line describing the machine, for the record in docs/performance.rst."""
    import numpy as np
    from threadpoolctl import threadpool_info

    cpu = platform.processor() or platform.machine()
    try:
        with open("/proc/cpuinfo") as info:
            names = [line.split(":", 1)[1].strip() for line in info
                     if line.startswith("model name")]
        cpu = names[0] if names else cpu
    except OSError:
        pass
    blas = ", ".join(
        f"{i['internal_api']} {i['num_threads']} threads"
        for i in threadpool_info() if i["user_api"] == "blas"
    )
    return (f"{cpu}; {os.cpu_count()} logical cores; Python "
            f"{platform.python_version()}; numpy {np.__version__}; BLAS: {blas}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small sizes")
    parser.add_argument("--jobs", type=int, default=1, help="scripts run at a time")
    parser.add_argument("--timeout", type=float, default=None,
                        help="seconds a script may run before it is stopped (a failure)")
    parser.add_argument("scripts", nargs="*", help="only these bench_*.py names")
    args = parser.parse_args(argv)
    scripts = sorted(HERE.glob("bench_*.py"))
    if args.scripts:
        scripts = [s for s in scripts if s.name in args.scripts or s.stem in args.scripts]
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(ROOT), env.get("PYTHONPATH")]))
    print(f"machine: {machine()}")
    print(f"command: python tests/benchmarks/run_all.py{' --quick' * args.quick}")
    def run(script):
        command = [sys.executable, str(script)] + (["--quick"] if args.quick else [])
        start = time.perf_counter()
        try:
            done = subprocess.run(command, cwd=ROOT, env=env, capture_output=True,
                                  text=True, timeout=args.timeout)
        except subprocess.TimeoutExpired as stopped:
            done = subprocess.CompletedProcess(
                command, "timeout", _text(stopped.stdout),
                _text(stopped.stderr) + f"\nstopped after {args.timeout:g} s (--timeout)")
        return script.name, time.perf_counter() - start, done

    summary = []
    with ThreadPoolExecutor(max_workers=max(1, args.jobs)) as pool:
        for name, seconds, done in pool.map(run, scripts):
            print(f"\n=== {name} ({seconds:.1f} s) ===")
            print(done.stdout.rstrip())
            if done.returncode:
                print(done.stderr.rstrip())
            summary.append((name, seconds, done.returncode))
    print(f"\n{'script':32s} {'seconds':>8s}  status")
    for name, seconds, code in summary:
        print(f"{name:32s} {seconds:8.1f}  {'ok' if code == 0 else f'FAILED ({code})'}")
    print(f"{'total':32s} {sum(s for _, s, _ in summary):8.1f}")
    return int(any(code != 0 for _, _, code in summary))


def _text(output):
    """What a stopped script had printed, as text."""
    if output is None:
        return ""
    return output.decode(errors="replace") if isinstance(output, bytes) else output


if __name__ == "__main__":
    sys.exit(main())
