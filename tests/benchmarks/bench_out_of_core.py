"""Benchmark of fitting from a file larger than memory allows to hold twice.

Writes curves (float64, 500 grid points) to a ``.npy`` file, then fits
``FunctionalPCA`` and ``FunctionalRidge`` from the memory-mapped file with
``skfunc.utils.partial_fit_batches`` (progress on), each in a fresh process,
and prints:

* the peak resident memory of that process (``VmHWM`` of
  ``/proc/self/status``, interpreter and libraries included) against the
  file's size. Target: below one half;
* the fit's throughput (file bytes / fit seconds) against the disk's
  sequential read speed measured in the same run. Target: at least 0.7.

How the read speed is measured: the same file is read from start to end
with 64 MiB ``readinto`` calls. Before every read and every fit the file's
pages are dropped from the page cache with
``os.posix_fadvise(fd, 0, 0, POSIX_FADV_DONTNEED)`` (which needs no root,
unlike ``drop_caches``), after an ``fsync`` when the file was written, so
both start from the disk. Reads and fits alternate ``--repeat`` times and
the best of each is kept, so the ratio compares like with like on a busy
machine. On a virtual machine the "disk" may itself be cached by the host:
the ratio is still against what a plain read of the file costs here.

Usage, from the repository root::

    python tests/benchmarks/bench_out_of_core.py            # 4 GB file
    python tests/benchmarks/bench_out_of_core.py --size-gb 8
    python tests/benchmarks/bench_out_of_core.py --quick    # 0.1 GB smoke run

The file goes to ``--dir`` (default: the system's temporary folder) and is
removed at the end; the script first checks with ``df`` that the folder has
at least four times the file's size free.
"""

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
from _timing import status_bytes  # (also puts the repository on sys.path)

M = 500  # grid points per curve
READ_BUFFER = 64 << 20


def meminfo(field):
    with open("/proc/meminfo") as info:
        for line in info:
            if line.startswith(field + ":"):
                return int(line.split()[1]) * 1024
    return None


def drop_from_page_cache(path):
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
        os.posix_fadvise(fd, 0, 0, os.POSIX_FADV_DONTNEED)
    finally:
        os.close(fd)


def write_curves(folder, n_rows, seed=0):
    """Smooth random curves plus noise (like process logs), and a scalar
    outcome, written block by block (memory stays near one block)."""
    rng = np.random.default_rng(seed)
    t = np.linspace(0.0, 1.0, M)
    shapes = np.array([np.cos(np.pi * k * t) for k in range(8)])
    beta = np.exp(-((t - 0.5) ** 2) / 0.02) / M
    block = 20_000
    noise = 0.1 * rng.standard_normal((block, M))
    x_path, y_path = folder / "curves.npy", folder / "outcome.npy"
    y = np.empty(n_rows)
    with open(x_path, "wb") as out:
        np.lib.format.write_array_header_1_0(
            out, {"descr": "<f8", "fortran_order": False, "shape": (n_rows, M)})
        for start in range(0, n_rows, block):
            rows = min(block, n_rows - start)
            X = rng.standard_normal((rows, 8)) @ shapes
            X += noise[rng.integers(0, block, rows)]
            y[start:start + rows] = X @ beta + 0.1 * rng.standard_normal(rows)
            out.write(X.tobytes())
        out.flush()
        os.fsync(out.fileno())
    np.save(y_path, y)
    return x_path, y_path


def cpu_seconds():
    """(user, system) processor seconds of this process so far."""
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime, usage.ru_stime


def read_speed(path, drop=True, cpu=False):
    """Bytes per second of one sequential read of the whole file, from the
    disk (``drop``) or from wherever the page cache left its pages (and, with
    ``cpu``, the processor seconds per byte the read cost this process)."""
    if drop:
        drop_from_page_cache(path)
    buffer = bytearray(READ_BUFFER)
    total = 0
    start, before = time.perf_counter(), sum(cpu_seconds())
    with open(path, "rb", buffering=0) as f:
        while True:
            got = f.readinto(buffer)
            if not got:
                break
            total += got
    speed = total / (time.perf_counter() - start)
    return (speed, (sum(cpu_seconds()) - before) / total) if cpu else speed


def product_arithmetic(x_path, rows=8388):
    """Per core (BLAS at one thread), on one block of rows of the file held
    in memory: the dense product's rate (GFLOP/s) for each estimator's K,
    and the rate of its per-block pass (the product as the fit forms it, and
    the whole statistics of the block), in MB of X per CPU second."""
    from threadpoolctl import threadpool_limits

    from skfunc._blocks import BandedProduct

    X = np.array(np.load(x_path, mmap_mode="r")[:rows])
    y = X @ np.full(X.shape[1], 1.0 / X.shape[1])
    t = np.linspace(0.0, 1.0, X.shape[1])
    out = {}
    with threadpool_limits(1, user_api="blas"), warnings.catch_warnings():
        warnings.simplefilter("ignore")  # (alpha at an edge on this sample)
        for name, estimator in estimators(t).items():
            estimator.fit(X[:2000], None if name == "FunctionalPCA" else y[:2000])
            if name == "FunctionalPCA":
                coords = estimator._coordinates()
                banded, rest = coords._integrate, coords._rest.shape[0]
                statistics = estimator._statistics_function()
                index = np.arange(X.shape[0])
                args = (X, index)
            else:
                banded = BandedProduct(estimator._integration_operator(estimator._basis()))
                rest = 0
                statistics = estimator._statistics_function()
                args = (X, y, np.ones(X.shape[0]))
            k = banded.shape[1]
            dense = np.random.default_rng(0).standard_normal((X.shape[1], k))
            parts = banded.segments or [(None, None, banded.operator)]
            flops = 2 * (sum(part.size for *_, part in parts) + rest * rest)
            times = {key: np.inf for key in ("dense", "banded", "statistics")}
            calls = {"dense": (np.matmul, (X, dense)), "banded": (banded, (X,)),
                     "statistics": (statistics, args)}
            for _ in range(5):
                for key, (func, func_args) in calls.items():
                    start = time.process_time()
                    func(*func_args)
                    times[key] = min(times[key], time.process_time() - start)
            out[name] = {
                "K": k, "segments": len(parts), "dense_flops_per_byte": 2 * k / 8,
                "gflops": 2 * k * X.size / times["dense"] / 1e9,
                "dense_mb": X.nbytes / times["dense"] / 1e6,
                "flops_per_byte": flops / (8 * X.shape[1]),
                "product_mb": X.nbytes / times["banded"] / 1e6,
                "statistics_mb": X.nbytes / times["statistics"] / 1e6,
            }
    return out


def estimators(t):
    from skfunc.decomposition import FunctionalPCA
    from skfunc.linear_model import FunctionalRidge

    return {"FunctionalPCA": FunctionalPCA(5, basis="bspline", n_basis=20, grid=t),
            "FunctionalRidge": FunctionalRidge(grid=t)}


def fit_child(name, x_path, y_path, blas_threads):
    """Fit one estimator from the memory-mapped file; print its figures."""
    from threadpoolctl import threadpool_limits

    if blas_threads:
        threadpool_limits(int(blas_threads), user_api="blas")
    from skfunc.utils import partial_fit_batches

    X = np.load(x_path, mmap_mode="r")
    estimator = estimators(np.linspace(0.0, 1.0, X.shape[1]))[name]
    y = None if name == "FunctionalPCA" else np.load(y_path)
    before = status_bytes("VmRSS")
    start, (user, system) = time.perf_counter(), cpu_seconds()
    partial_fit_batches(estimator, X, y, verbose=1)
    seconds = time.perf_counter() - start
    after = cpu_seconds()
    print(json.dumps({"seconds": seconds, "user": after[0] - user,
                      "system": after[1] - system, "cpu": sum(after) - user - system,
                      "peak": status_bytes("VmHWM"),
                      "before": before, "rows": int(estimator.n_samples_seen_)}))


def run_fit(name, x_path, y_path, show_progress, blas_threads):
    drop_from_page_cache(x_path)
    done = subprocess.run(
        [sys.executable, __file__, "--fit-child", name, str(x_path), str(y_path),
         str(blas_threads or 0)],
        capture_output=True, text=True, check=True,
    )
    lines = done.stdout.strip().splitlines()
    if show_progress:
        shown = lines[:-1] if len(lines) <= 8 else lines[:3] + ["   ..."] + lines[-4:-1]
        print("\n".join("   " + line for line in shown))
    return json.loads(lines[-1])


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="a 0.1 GB file")
    parser.add_argument("--size-gb", type=float, default=None, help="file size (GB)")
    parser.add_argument("--repeat", type=int, default=None, help="reads and fits each")
    parser.add_argument("--dir", default=None, help="folder for the file")
    parser.add_argument("--blas-threads", type=int, default=None,
                        help="limit BLAS threads in the fits (threadpoolctl); on a "
                        "machine shared with other jobs, 1 avoids threads that wait "
                        "for each other")
    parser.add_argument("--fit-child", nargs=4, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.fit_child:
        fit_child(*args.fit_child)
        return 0
    size = args.size_gb or (0.1 if args.quick else 4.0)
    repeat = args.repeat or (1 if args.quick else 2)
    parent = Path(args.dir or tempfile.gettempdir())
    df = subprocess.run(["df", "-h", str(parent)], capture_output=True, text=True)
    print(df.stdout.rstrip())
    free = shutil.disk_usage(parent).free
    if free < 4 * size * 1e9:
        print(f"only {free / 1e9:.1f} GB free in {parent}: need 4 x {size} GB; "
              "use --dir or --size-gb")
        return 1
    if args.blas_threads:
        print(f"BLAS limited to {args.blas_threads} thread(s) in the fits")
    print(f"memory: {meminfo('MemTotal') / 1e9:.1f} GB total, "
          f"{meminfo('MemAvailable') / 1e9:.1f} GB available")
    n_rows = int(size * 1e9) // (8 * M)
    with tempfile.TemporaryDirectory(dir=parent, prefix="skfunc-bench-") as folder:
        start = time.perf_counter()
        x_path, y_path = write_curves(Path(folder), n_rows)
        file_bytes = x_path.stat().st_size
        print(f"wrote {n_rows:,} curves x {M} points (float64): {file_bytes / 1e9:.2f} GB "
              f"in {time.perf_counter() - start:.1f} s")
        speeds, read_cpu, fits = [], [], {"FunctionalPCA": [], "FunctionalRidge": []}
        for r in range(repeat):
            speed, cpu = read_speed(x_path, cpu=True)
            speeds.append(speed)
            read_cpu.append(cpu)
            print(f"\nround {r + 1}: sequential read {speed / 1e6:,.0f} MB/s "
                  f"({cpu * 1e9:.2f} CPU s per GB), load average {os.getloadavg()[0]:.1f}")
            for name in fits:
                print(f"  {name}, partial_fit_batches(verbose=1):")
                fits[name].append(run_fit(name, x_path, y_path, True, args.blas_threads))
        read_speed(x_path, drop=False)  # the file now in the page cache
        cached = read_speed(x_path, drop=False)
        arithmetic = product_arithmetic(x_path)
    best_read = max(speeds)
    print(f"\nfile {file_bytes / 1e9:.2f} GB; best sequential read {best_read / 1e6:,.0f} MB/s "
          f"(of {repeat}; page cache dropped with posix_fadvise before each read and "
          f"fit; a read from the page cache runs at {cached / 1e6:,.0f} MB/s; the "
          f"read itself costs {min(read_cpu) * 1e9:.2f} CPU s per GB)")
    print(f"{'estimator':18s} {'best s':>8s} {'MB/s':>8s} {'/ read':>7s} {'CPU s':>7s} "
          f"{'user':>6s} {'system':>7s} {'MB/CPU s':>9s} {'start GB':>9s} {'peak GB':>8s} "
          f"{'peak / file':>12s}  targets: / read >= 0.7, peak / file < 0.5")
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    for name, runs in fits.items():
        best = min(runs, key=lambda run: run["seconds"])
        assert best["rows"] == n_rows
        speed = file_bytes / best["seconds"]
        peak = max(run["peak"] for run in runs)
        ok = speed / best_read >= 0.7 and peak / file_bytes < 0.5
        lean = min(runs, key=lambda run: run["cpu"])
        print(f"{name:18s} {best['seconds']:8.2f} {speed / 1e6:8,.0f} "
              f"{speed / best_read:7.2f} {lean['cpu']:7.2f} {lean['user']:6.2f} "
              f"{lean['system']:7.2f} {file_bytes / lean['cpu'] / 1e6:9,.0f} "
              f"{best['before'] / 1e9:9.3f} {peak / 1e9:8.3f} {peak / file_bytes:12.3f}  "
              f"{'yes' if ok else 'NO'}")
    print("CPU s: processor time of the fitting process (all its threads), user "
          "(the computing) and system (the kernel reading the file's pages for it); "
          "on a machine shared with other jobs the wall time also counts the waits "
          "for a core, and MB/CPU s shows what the fit needs of a core. start GB: "
          "resident memory when the fit starts (interpreter and libraries).")
    print(f"\nThe arithmetic, per core (one BLAS thread, a block of {8388:,} rows in "
          f"memory), and the bound it puts on {cores} cores:")
    print(f"{'estimator':18s} {'K':>3s} {'dense flop/B':>12s} {'GFLOP/s':>8s} "
          f"{'MB/CPU s':>9s} {'segments':>9s} {'flop/B':>7s} {'product':>8s} "
          f"{'block pass':>11s} {'fit':>6s} {'bound / read':>13s}")
    for name, runs in fits.items():
        a = arithmetic[name]
        fit_rate = file_bytes / min(run["cpu"] for run in runs) / 1e6
        bound = min(1.0, cores * fit_rate * 1e6 / best_read)
        print(f"{name:18s} {a['K']:3d} {a['dense_flops_per_byte']:12.2f} {a['gflops']:8.1f} "
              f"{a['dense_mb']:9,.0f} {a['segments']:9d} {a['flops_per_byte']:7.2f} "
              f"{a['product_mb']:8,.0f} {a['statistics_mb']:11,.0f} {fit_rate:6,.0f} "
              f"{bound:13.2f}")
    print("dense: X @ (m x K) as one product, flop/B = 2 K / 8 flops per byte of X, "
          "at the GFLOP/s measured here; segments, flop/B, product: the product as "
          "the fit forms it (B-splines are nonzero on few grid points: one product "
          "per grid segment, plus K x K for FunctionalPCA's coordinates); block pass: "
          "the estimator's whole statistics of the block; fit: the file's MB per "
          "CPU second of the fit above (reading included). In MB of X per CPU "
          f"second. bound / read = min(1, {cores} cores x fit / read speed): the best "
          "ratio the measured processor cost allows, were every core busy with the "
          "fit all the time; 0.7 is reachable only where it is at least 0.7.")
    if args.quick:
        print("(quick run: the file is too small for the memory target, which "
              "counts the interpreter and its libraries)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
