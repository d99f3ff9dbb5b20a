#!/usr/bin/env python3
"""bench_scipy.py - time scipy's spsolve on the matrix `make bench` exported.

usage: bench_scipy.py BENCH_DIR
Reads BENCH_DIR/matrix.mtx, BENCH_DIR/rhs.mtx and BENCH_DIR/bench_point.json
(eddy2d's whole speed point on the same matrix, written by tests/bench.c) and
prints the ratio.  Exits 0 with a message where scipy is missing.
"""
import json
import statistics
import sys
import time

try:
    import scipy.io
    import scipy.sparse.linalg
    import numpy
except ImportError:
    print("scipy comparison skipped: scipy is not installed for %s "
          "(Debian: apt-get install python3-scipy)" % sys.executable)
    sys.exit(0)

d = sys.argv[1]
A = scipy.io.mmread(d + "/matrix.mtx").tocsc()
b = numpy.asarray(scipy.io.mmread(d + "/rhs.mtx")).ravel()
point = json.load(open(d + "/bench_point.json"))
repeat = int(point.get("repeat", 3))
best = None
for spec in ("COLAMD", "MMD_AT_PLUS_A"):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        x = scipy.sparse.linalg.spsolve(A, b, permc_spec=spec, use_umfpack=False)
        times.append(time.perf_counter() - t0)
    med = statistics.median(times)
    res = numpy.linalg.norm(A @ x - b) / numpy.linalg.norm(b)
    print("scipy spsolve (SuperLU, %s): %.3f s (median of %d), relative residual %.1e"
          % (spec, med, repeat, res))
    if best is None or med < best[0]:
        best = (med, spec)
ours = point["whole_seconds"]
print("eddy2d whole speed point on the same matrix (%d unknowns): %.3f s"
      % (point["unknowns"], ours))
print("eddy2d is %.2fx faster than scipy's best (%s) (goal >= 1.5)" % (best[0] / ours, best[1]))
