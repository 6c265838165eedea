#!/usr/bin/python3
"""File-to-result speed of the numpy/scipy way, for .ci/bench: for every
file given, read it with numpy.loadtxt and run the job of fit_bench.py
(Halpha-Hdelta: Voigt + linear baseline per line by curve_fit, then the
Boltzmann fit), exactly as glowlog analyze reads and analyses each file.

    /usr/bin/python3 testdata/scipy/file_bench.py PASSES FILE...

Each pass times every file in turn (loadtxt + fit, wall clock); the pass's
figure is its total time divided by the number of files. It prints the
median of the passes in milliseconds per file, as
"python_file_median_ms <value>", and the median of the passes' CPU time
(process_time) per file as "python_file_cpu_median_ms <value>". Interpreter start-up and imports are not
timed (they would only add to the Python side).
"""
import statistics
import sys
import time

import numpy as np

from fit_bench import job


def main():
    passes = int(sys.argv[1])
    files = sys.argv[2:]
    if passes < 1 or not files:
        sys.exit("usage: file_bench.py PASSES FILE...")
    per_file, cpu_per_file = [], []
    t = 0.0
    for _ in range(passes):
        total, cpu = 0.0, 0.0
        for path in files:
            t0, c0 = time.perf_counter(), time.process_time()
            d = np.loadtxt(path, delimiter=",", comments="#", skiprows=3)
            t = job(d[:, 0], d[:, 1], 0.35, 1000.0)
            total += time.perf_counter() - t0
            cpu += time.process_time() - c0
        per_file.append(total / len(files) * 1e3)
        cpu_per_file.append(cpu / len(files) * 1e3)
    print("python_T_exc_K %.1f" % t)
    print("python_file_passes_ms " + " ".join("%.3f" % v for v in per_file))
    print("python_file_median_ms %.3f" % statistics.median(per_file))
    print("python_file_cpu_median_ms %.3f" % statistics.median(cpu_per_file))


if __name__ == "__main__":
    main()
