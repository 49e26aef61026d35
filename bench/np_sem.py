#!/usr/bin/env python3
"""The same 20-node linear model as bench/bench_sem.lua, simulated with
numpy (Debian python3-numpy): the reference for m:simulate."""
import resource
import sys
import time

try:
    import numpy as np
except ImportError:
    print("numpy not installed")
    sys.exit(0)

rows = int(sys.argv[1])
t0 = time.perf_counter()
rng = np.random.default_rng(1)
v = {}
for i in range(1, 21):
    x = rng.standard_normal(rows)
    for j in (i - 1, i - 2):
        if i >= 3:
            x += (0.3 + 0.01 * ((i * 7 + j) % 20)) * v[j]
    v[i] = x
t1 = time.perf_counter()
print("seconds=%.3f mean_v20=%.6f peak_mb=%.1f" % (t1 - t0, v[20].mean(),
      resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024))
