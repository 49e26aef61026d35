"""bench_csv.py: pandas' read_csv on the file of bench_csv, the baseline.

    bench_csv.py FILE REPS

Prints one line of key=value pairs like bench_csv read: best_s, sum (of
every value), base_kb (ru_maxrss once pandas is imported) and rss_kb
(ru_maxrss after the first read); or "missing=1" when pandas cannot be
imported.
"""
import resource
import sys
import time


def maxrss_kb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def main():
    path, reps = sys.argv[1], int(sys.argv[2])
    try:
        import pandas as pd
    except ImportError:
        print("missing=1")
        return 0
    base = maxrss_kb()
    best, rss, total = float("inf"), 0, 0.0
    for r in range(max(reps, 1)):
        t0 = time.perf_counter()
        d = pd.read_csv(path, dtype="float64")
        t = time.perf_counter() - t0
        if r == 0:
            rss = maxrss_kb()
            total = float(d.to_numpy().sum(dtype="float64"))
        best = min(best, t)
        del d
    print("best_s=%.6f sum=%.10e base_kb=%d rss_kb=%d version=%s"
          % (best, total, base, rss, pd.__version__))
    return 0


if __name__ == "__main__":
    sys.exit(main())
