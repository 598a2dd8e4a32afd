"""Benchmark of the Python module (issue 21): a trace of an n x p
Fortran-ordered array from Python against the same trace from C++
(bench_python_reference), and the peak memory of the Python process.

Usage: python3 bench/bench_python.py REFERENCE_EXE [n p K repeats]
(defaults: the issue's 1000 x 20000, first K = 300 knots, 5 repeats).
Goal: time ratio Python / C++ <= 1.05, peak memory <= 1.1 x the array's bytes
(read as the peak over the process's resident size before the array was made:
bench/README.md says why; the whole process's peak is printed beside it).

The data: independent standard normal columns from a fixed seed, the
response a sparse combination of 10 columns plus noise (invented). Both sides
trace with storage "view" (what automatic picks at this shape) and
max_knots = K. The two sides alternate, each timing the median of its
repeats; the ratio is of the medians. Memory is measured in a fresh Python
process: its peak resident size (VmHWM) over the array's bytes, the growth
of the peak during the trace (the peak reset just before it), and what is
resident before any data: the interpreter, numpy's import and the module's
(the growth of VmRSS at each import)."""

import os
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

MEMORY_PROBE = """
import sys
def status(field):
    with open("/proc/self/status") as f:
        return next(int(line.split()[1]) * 1024 for line in f if line.startswith(field + ":"))
interpreter = status("VmRSS")
import numpy as np
with_numpy = status("VmRSS")
import knotpath
with_module = status("VmRSS")
n, p, k = map(int, sys.argv[1:4])
rng = np.random.default_rng(21)
x = rng.standard_normal((p, n)).T  # Fortran-ordered, made in place
y = x[:, :10] @ np.linspace(1.0, 0.1, 10) + rng.standard_normal(n)
with open("/proc/self/clear_refs", "w") as f:
    f.write("5")
before = status("VmRSS")
knotpath.trace(x, y, storage="view", max_knots=k)
print(status("VmHWM"), before, x.nbytes, interpreter, with_numpy - interpreter, with_module - with_numpy)
"""


def data(n, p):
    rng = np.random.default_rng(21)
    x = rng.standard_normal((p, n)).T
    y = x[:, :10] @ np.linspace(1.0, 0.1, 10) + rng.standard_normal(n)
    return x, y


def main():
    reference = sys.argv[1]
    n, p, k, repeats = (int(a) for a in (sys.argv[2:6] if len(sys.argv) >= 6 else (1000, 20000, 300, 5)))
    import knotpath
    x, y = data(n, p)
    assert x.flags.f_contiguous
    with tempfile.TemporaryDirectory() as folder:
        raw = os.path.join(folder, "design.bin")
        with open(raw, "wb") as f:
            f.write(x.T.tobytes())  # column-major bytes of x
            f.write(y.tobytes())
        python_times, cpp_times, knots = [], [], None
        for _ in range(repeats):
            start = time.perf_counter()
            path = knotpath.trace(x, y, storage="view", max_knots=k)
            python_times.append(time.perf_counter() - start)
            knots = len(path.knots["step"])
            out = subprocess.run([reference, raw, str(n), str(p), str(k), "1"], capture_output=True, text=True,
                                 check=True).stdout.split()
            cpp_times.append(float(out[0]))
            assert int(out[1]) == knots, (out, knots)
    probe = subprocess.run([sys.executable, "-c", MEMORY_PROBE, str(n), str(p), str(k)], capture_output=True,
                           text=True, check=True).stdout.split()
    peak, before, nbytes, interpreter, numpy_import, module_import = (float(v) for v in probe)
    py, cpp = statistics.median(python_times), statistics.median(cpp_times)
    print(f"n={n} p={p} K={k} knots={knots} repeats={repeats}")
    print(f"python_s={py:.4f} cpp_s={cpp:.4f} ratio={py / cpp:.3f} "
          f"(python {min(python_times):.4f}-{max(python_times):.4f}, cpp {min(cpp_times):.4f}-{max(cpp_times):.4f})")
    print(f"peak_over_array={peak / nbytes:.3f} before_trace_over_array={before / nbytes:.3f} "
          f"trace_growth_over_array={(peak - before) / nbytes:.3f}")
    # The goal's measure (bench/README.md, "How the memory goal is read"):
    # the peak over what the process held before the array was made.
    baseline = interpreter + numpy_import + module_import
    print(f"peak_over_baseline_over_array={(peak - baseline) / nbytes:.3f} (goal <= 1.1)")
    # what is resident before the array: the interpreter, `import numpy` and
    # `import knotpath` (each the growth of VmRSS, over the array's bytes)
    print(f"interpreter_over_array={interpreter / nbytes:.3f} numpy_import_over_array={numpy_import / nbytes:.3f} "
          f"module_import_over_array={module_import / nbytes:.3f}")


if __name__ == "__main__":
    main()
