"""The same capability computation an engineer would script with pandas, scipy and statsmodels.

Run on the file the Rust benchmark writes:
    python3 benches/capability_reference.py /tmp/capstack_bench_200000x50.csv
Prints the wall time of the read and of the statistics.
"""
import sys
import time
import warnings

warnings.filterwarnings("ignore", message=".*N > 5000.*")

import numpy as np
import pandas as pd
from scipy import stats
from statsmodels.stats.diagnostic import normal_ad

D2_2 = 2 / np.sqrt(np.pi)
LSL, USL, T = 9.97, 10.03, 10.0


def feature_stats(x):
    n = len(x)
    mean = x.mean()
    s = x.std(ddof=1)
    sw = np.abs(np.diff(x)).mean() / D2_2
    z95 = stats.norm.ppf(0.95)
    cp, cpk = (USL - LSL) / (6 * sw), min(USL - mean, mean - LSL) / (3 * sw)
    pp, ppk = (USL - LSL) / (6 * s), min(USL - mean, mean - LSL) / (3 * s)
    out = dict(
        n=n, mean=mean, sd=s, sdw=sw, cp=cp, cpk=cpk, pp=pp, ppk=ppk,
        cp_lower=cp * np.sqrt(stats.chi2.ppf(0.05, n - 1) / (n - 1)),
        cpk_lower=cpk - z95 * np.sqrt(1 / (9 * n) + cpk**2 / (2 * (n - 1))),
        ppm_within=(stats.norm.cdf((LSL - mean) / sw) + stats.norm.sf((USL - mean) / sw)) * 1e6,
        ppm_overall=(stats.norm.cdf((LSL - mean) / s) + stats.norm.sf((USL - mean) / s)) * 1e6,
        skew=stats.skew(x, bias=False), kurt=stats.kurtosis(x, bias=False),
    )
    out["ad_a2"], out["ad_p"] = normal_ad(x)
    out["sw_w"], out["sw_p"] = stats.shapiro(x)
    return out


def main(path):
    t0 = time.perf_counter()
    df = pd.read_csv(path)
    t1 = time.perf_counter()
    results = [feature_stats(df[c].to_numpy()) for c in df.columns if c != "part"]
    t2 = time.perf_counter()
    print(f"pandas read {t1 - t0:.3f} s, statistics {t2 - t1:.3f} s, total {t2 - t0:.3f} s, {len(results)} features")


if __name__ == "__main__":
    main(sys.argv[1])
