#!/usr/bin/env python3
"""bench_scipy.py - scipy's SuperLU (splu) on a matrix `make bench` exported.

usage: bench_scipy.py MATRIX.mtx RHS.mtx [REPEAT [PERMC_SPEC...]]
Factorises the matrix with scipy.sparse.linalg.splu under each of SuperLU's
column orderings given (default COLAMD, MMD_AT_PLUS_A, MMD_ATA), solves once,
and prints one JSON object on one line: per ordering the median factor and
solve times (s) of REPEAT runs (default 3), the fill (entries of L + U) and
the relative residual; and the best ordering by time and by fill.
tests/bench.c runs it (through /usr/bin/python3) and prints the figures
beside its own.  Where scipy is missing it prints {"skipped": "..."}.
Debian: apt-get install python3-scipy (the bench is not part of CI).
"""
import json
import statistics
import sys
import time

try:
    import numpy
    import scipy
    import scipy.io
    import scipy.sparse.linalg
except ImportError:
    print(json.dumps({"skipped": "scipy is not installed for %s (Debian: apt-get install "
                                 "python3-scipy)" % sys.executable}))
    sys.exit(0)

A = scipy.io.mmread(sys.argv[1]).tocsc()
b = numpy.asarray(scipy.io.mmread(sys.argv[2])).ravel()
repeat = int(sys.argv[3]) if len(sys.argv) > 3 else 3
out = {"scipy": scipy.__version__, "n": A.shape[0], "orderings": {}}
specs = sys.argv[4:] or ["COLAMD", "MMD_AT_PLUS_A", "MMD_ATA"]
for spec in specs:
    tf, ts = [], []
    for _ in range(repeat):
        t0 = time.perf_counter()
        lu = scipy.sparse.linalg.splu(A, permc_spec=spec)
        t1 = time.perf_counter()
        x = lu.solve(b)
        t2 = time.perf_counter()
        tf.append(t1 - t0)
        ts.append(t2 - t1)
        fill = lu.L.nnz + lu.U.nnz
        del lu
    res = float(numpy.linalg.norm(A @ x - b) / numpy.linalg.norm(b))
    out["orderings"][spec] = {"factor_s": statistics.median(tf), "solve_s": statistics.median(ts),
                              "fill": fill, "residual": res}
o = out["orderings"]
out["best_time"] = min(o, key=lambda k: o[k]["factor_s"] + o[k]["solve_s"])
out["best_fill"] = min(o, key=lambda k: o[k]["fill"])
print(json.dumps(out))
