# Tests Fluxel scene noise with scipy: reads a grey PFM of (noisy - clean) / sigma and prints test statistics as JSON.
# Kolmogorov-Smirnov against N(0,1) (scipy.stats.kstest) and D'Agostino-Pearson normality (scipy.stats.normaltest).
# Usage: scene_noise.py FILE.pfm   (run with Debian's /usr/bin/python3)
import json
import sys

import numpy as np
from scipy import stats

with open(sys.argv[1], "rb") as f:
    data = f.read()
# Our own file: "Pf\nW H\n-1.0\n" then little-endian float32 (Netpbm PFM); orientation does not matter here.
head = data.split(b"\n", 3)
w, h = map(int, head[1].split())
z = np.frombuffer(head[3][: w * h * 4], dtype="<f4").astype(np.float64)
ks = stats.kstest(z, "norm")
nt = stats.normaltest(z)
print(json.dumps({"n": int(z.size), "ks_stat": ks.statistic, "ks_p": ks.pvalue, "normal_p": nt.pvalue,
                  "mean": z.mean(), "std": z.std(ddof=1)}))
