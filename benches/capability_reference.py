"""The same capability computation an engineer would script with pandas, scipy and statsmodels.

It computes what `capstack capability --model normal` reports for each feature: the moments,
within and overall sigma, Cp/Cpk/Pp/Ppk and their sides, Cpm, one-sided bounds and two-sided
intervals, observed and expected reject rates split below/above, Anderson-Darling and
Shapiro-Wilk, the normal model's percentile indices, and the individuals / moving-range chart
with Nelson tests 1-4 (signals placed at their part and line, their chance p). Written with
whole-array numpy operations, not Python loops over values.

Run on the file the Rust benchmark writes:
    python3 benches/capability_reference.py /tmp/capstack_bench_200000x50.csv
Prints the wall time of the read and of the statistics; with --check FILE.json (the output of
`capstack capability --model normal --format json` on the same file and specs) it also
compares the figures and the signal counts with capstack's.
"""
import json
import sys
import time
import warnings
from math import factorial

warnings.filterwarnings("ignore", message=".*N > 5000.*")

import numpy as np
import pandas as pd
from numpy.lib.stride_tricks import sliding_window_view
from scipy import stats
from statsmodels.stats.diagnostic import normal_ad

D2_2 = 2 / np.sqrt(np.pi)
D4_2 = 1 + 3 * np.sqrt(2 - 4 / np.pi) / D2_2  # 3.2665: d3(2) = sqrt(2 - 4/pi)
LSL, USL, T = 9.97, 10.03, 10.0
CONFIDENCE = 0.95
MAX_LISTED = 1000
# Chance per point, for independent normal values, of tests 1-4 (a signal at every point that
# completes or extends a run): 2*Phi(-3), 2*(1/2)^9, 2/6!, 2*E14/14! (E14 = 199360981, Euler
# zigzag number), and of a moving range above D4*MRbar: P(|Z| > D4*d2/sqrt(2)).
CHANCE_1_4 = (2 * stats.norm.cdf(-3) + 2 * 0.5**9 + 2 / factorial(6) + 2 * 199360981 / factorial(14)
              + 2 * stats.norm.cdf(-D4_2 * D2_2 / np.sqrt(2)))


def in_a_row(flags, k):
    """True where the last k flags (this one included) are all true."""
    c = np.concatenate(([0], np.cumsum(flags, dtype=np.int64)))
    out = np.zeros(len(flags), dtype=bool)
    out[k - 1:] = (c[k:] - c[:-k]) == k
    return out


def nelson_1_4(x, centre, sigma, mr, mr_ucl):
    """Signalling points of tests 1-4 on the individuals chart and of the moving-range chart."""
    z = (x - centre) / sigma
    side = np.sign(z)
    step = np.sign(np.diff(z))
    rule1 = np.abs(z) > 3
    rule2 = in_a_row(side > 0, 9) | in_a_row(side < 0, 9)
    rule3 = np.zeros(len(x), dtype=bool)
    rule3[1:] = in_a_row(step > 0, 5) | in_a_row(step < 0, 5)
    alternates = np.zeros(len(step), dtype=bool)
    alternates[1:] = (step[1:] != 0) & (step[1:] == -step[:-1])
    rule4 = np.zeros(len(x), dtype=bool)
    rule4[1:] = in_a_row(alternates, 12)
    dispersion = np.zeros(len(x), dtype=bool)
    dispersion[1:] = mr > mr_ucl
    return {1: rule1, 2: rule2, 3: rule3, 4: rule4, "dispersion": dispersion}


def feature_stats(x, parts):
    n = len(x)
    mean = x.mean()
    s = x.std(ddof=1)
    mr = np.abs(np.diff(x))
    mr_bar = mr.mean()
    sw = mr_bar / D2_2
    z = stats.norm.ppf(CONFIDENCE)
    z2 = stats.norm.ppf(1 - (1 - CONFIDENCE) / 2)
    chi_lo = stats.chi2.ppf([1 - CONFIDENCE], n - 1)
    chi_lo2, chi_hi2 = stats.chi2.ppf([(1 - CONFIDENCE) / 2, 1 - (1 - CONFIDENCE) / 2], n - 1)
    out = dict(n=n, missing=0, mean=mean, min=x.min(), max=x.max(), sd_overall=s, sd_within=sw)
    for key, sig in (("c", sw), ("p", s)):
        whole = (USL - LSL) / (6 * sig)
        lower_side, upper_side = (mean - LSL) / (3 * sig), (USL - mean) / (3 * sig)
        k = min(lower_side, upper_side)
        out.update({
            f"{key}p": whole, f"{key}pl": lower_side, f"{key}pu": upper_side, f"{key}pk": k,
            f"{key}p_lower": whole * np.sqrt(chi_lo[0] / (n - 1)),
            f"{key}pk_lower": k - z * np.sqrt(1 / (9 * n) + k**2 / (2 * (n - 1))),
            f"{key}p_interval": (whole * np.sqrt(chi_lo2 / (n - 1)), whole * np.sqrt(chi_hi2 / (n - 1))),
            f"{key}pk_interval": tuple(k + sgn * z2 * np.sqrt(1 / (9 * n) + k**2 / (2 * (n - 1))) for sgn in (-1, 1)),
        })
        below, above = stats.norm.cdf((LSL - mean) / sig) * 1e6, stats.norm.sf((USL - mean) / sig) * 1e6
        out[f"ppm_expected_{'within' if key == 'c' else 'overall'}"] = (below, above, below + above)
    out["cpm"] = (USL - LSL) / (6 * np.sqrt(s**2 + (mean - T) ** 2))
    below, above = np.count_nonzero(x < LSL) / n * 1e6, np.count_nonzero(x > USL) / n * 1e6
    out["ppm_observed"] = (below, above, below + above)
    out["skewness"], out["kurtosis"] = stats.skew(x, bias=False), stats.kurtosis(x, bias=False)
    a2, a2_p = normal_ad(x)
    out["anderson_darling"] = (a2, a2 * (1 + 0.75 / n + 2.25 / n**2), a2_p)
    out["shapiro_wilk"] = stats.shapiro(x)
    out["model"] = stats.norm.ppf([0.00135, 0.5, 0.99865], mean, s)
    # Individuals and moving-range chart, Nelson tests 1-4.
    found = nelson_1_4(x, mean, sw, mr, D4_2 * mr_bar)
    count = sum(int(v.sum()) for v in found.values())
    expected = n * CHANCE_1_4
    listed = []
    for rule, flags in found.items():
        idx = np.flatnonzero(flags)[:MAX_LISTED]
        listed.extend(zip(idx, [rule] * len(idx), parts[idx], idx + 2, x[idx]))
    listed.sort(key=lambda t: t[0])
    out["stability"] = dict(
        centre=mean, lcl=mean - 3 * sw, ucl=mean + 3 * sw, mr_ucl=D4_2 * mr_bar,
        signal_count=count, expected_by_chance=expected,
        chance_p=stats.poisson.sf(count - 1, expected), signals=listed[:MAX_LISTED],
    )
    return out


def check(results, path):
    """Compares the figures with capstack's JSON output on the same file."""
    got = {f["feature"]: f for f in json.load(open(path))["features"]}
    worst, chance = 0.0, 0.0
    for name, r in results.items():
        g = got[name]
        for key in ("mean", "sd_overall", "sd_within", "cp", "cpk", "pp", "ppk", "cpm", "cp_lower",
                    "cpk_lower", "pp_lower", "ppk_lower", "skewness", "kurtosis"):
            worst = max(worst, abs(g[key] - r[key]) / abs(r[key]))
        worst = max(worst, abs(g["shapiro_wilk"]["w"] - r["shapiro_wilk"][0]))
        worst = max(worst, abs(g["anderson_darling"]["a2"] - r["anderson_darling"][0]) / r["anderson_darling"][0])
        assert g["stability"]["signal_count"] == r["stability"]["signal_count"], name
        chance = max(chance, abs(g["stability"]["expected_by_chance"] - r["stability"]["expected_by_chance"])
                     / r["stability"]["expected_by_chance"])
    print(f"checked against {path}: indices within {worst:.1e} relative, signal counts equal, "
          f"signals expected by chance within {chance:.1e} (capstack's chances carry 5 digits)")


def main(path, check_path=None):
    t0 = time.perf_counter()
    df = pd.read_csv(path)
    t1 = time.perf_counter()
    parts = df["part"].to_numpy()
    results = {c: feature_stats(df[c].to_numpy(), parts) for c in df.columns if c != "part"}
    t2 = time.perf_counter()
    print(f"pandas read {t1 - t0:.3f} s, statistics {t2 - t1:.3f} s, total {t2 - t0:.3f} s, {len(results)} features")
    if check_path:
        check(results, check_path)


if __name__ == "__main__":
    args = sys.argv[1:]
    check_path = args[args.index("--check") + 1] if "--check" in args else None
    main(args[0], check_path)
