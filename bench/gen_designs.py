#!/usr/bin/python3
"""Write the benchmark datasets into bench/out/ (invented scenarios, fixed seeds).

  bal2000    2×5×8 design, 25 rows per cell (n = 2000): an invented adhesive trial —
             hours until a bonded joint fails under load, by surface treatment (2),
             adhesive (5) and cure temperature (8). Failure times are right-skewed
             (log-normal); only the treatment has a real effect.
  unbal2000  the same scenario, 15 to 35 rows per cell (n near 2000, unbalanced).
  f5_20k     5 factors of 2 to 4 levels, n = 20,000: invented request latencies of a
             web service by region (3), cache (2), codec (4), protocol (2), client (3);
             rows fall into cells at random; two main effects and one interaction.
  f3_200k    3 factors, n = 200,000: invented soil-moisture readings by site (4),
             probe model (5) and time of day (3), gamma-distributed noise.

Each file is a CSV whose last column is the response. Prints one line per dataset:
name, file, response, comma-separated factors, rows. Run from the repository root.
"""
import os
import sys

import numpy as np

OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "out")
SEED = 20260415


def write(name, factors, levels, codes, y, response):
    """codes: n × k integer level indices into levels[k]."""
    path = os.path.join(OUT, name + ".csv")
    cols = [np.asarray(lv, dtype=object)[codes[:, k]] for k, lv in enumerate(levels)]
    with open(path, "w") as f:
        f.write(",".join(factors + [response]) + "\n")
        for i in range(len(y)):
            f.write(",".join(str(c[i]) for c in cols) + ",%.6g\n" % y[i])
    print(name, path, response, ",".join(factors), len(y))


def adhesive(rng, counts):
    levels = [["plain", "primed"],
              ["epoxy", "acrylic", "urethane", "cyano", "silicone"],
              ["c40", "c50", "c60", "c70", "c80", "c90", "c100", "c110"]]
    cells = np.array(np.meshgrid(*[np.arange(len(l)) for l in levels],
                                 indexing="ij")).reshape(3, -1).T
    codes = np.repeat(cells, counts, axis=0)
    codes = codes[rng.permutation(len(codes))]       # rows in the order a log would hold
    log_h = np.log(120.0) + 0.25 * codes[:, 0] + rng.normal(0.0, 0.8, len(codes))
    return levels, codes, np.exp(log_h)


def main():
    os.makedirs(OUT, exist_ok=True)
    rng = np.random.default_rng(SEED)
    fac = ["treatment", "adhesive", "cure"]

    lv, codes, y = adhesive(rng, np.full(80, 25))
    write("bal2000", fac, lv, codes, y, "hours")

    lv, codes, y = adhesive(rng, rng.integers(15, 36, 80))
    write("unbal2000", fac, lv, codes, y, "hours")

    lv = [["north", "south", "east"], ["cold", "warm"], ["raw", "gzip", "zstd", "brotli"],
          ["h1", "h2"], ["browser", "mobile", "batch"]]
    n = 20000
    codes = np.column_stack([rng.integers(0, len(l), n) for l in lv])
    log_ms = (np.log(40.0) + np.array([0.0, 0.1, 0.25])[codes[:, 0]]
              - 0.3 * codes[:, 1] + 0.05 * codes[:, 2] * codes[:, 1]
              + rng.normal(0.0, 0.6, n))
    write("f5_20k", ["region", "cache", "codec", "protocol", "client"], lv, codes,
          np.exp(log_ms), "latency_ms")

    lv = [["ridge", "valley", "slope", "flat"], ["m1", "m2", "m3", "m4", "m5"],
          ["dawn", "noon", "dusk"]]
    n = 200000
    codes = np.column_stack([rng.integers(0, len(l), n) for l in lv])
    shape = 3.0
    mean = 20.0 + 2.0 * codes[:, 0] + np.array([0.0, -1.0, 0.5])[codes[:, 2]]
    write("f3_200k", ["site", "probe", "daytime"], lv, codes,
          rng.gamma(shape, mean / shape), "moisture")
    return 0


if __name__ == "__main__":
    sys.exit(main())
