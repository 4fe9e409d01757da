"""Adds a 50-digit mpmath value beside each of R's tail probabilities in
tests/reference/tails/distribution-tails.json (written by distributions.R).

Run from the repository root after the R script:  python3 tests/reference/distributions-mpmath.py
"""
import json
import mpmath as mp

mp.mp.dps = 50
PATH = "tests/reference/tails/distribution-tails.json"


def t_upper(t, df):
    t, df = mp.mpf(t), mp.mpf(df)
    # P(T > t) = I_{df/(df+t^2)}(df/2, 1/2) / 2, t > 0
    return mp.betainc(df / 2, mp.mpf(1) / 2, 0, df / (df + t * t), regularized=True) / 2


def f_upper(f, d1, d2):
    f, d1, d2 = mp.mpf(f), mp.mpf(d1), mp.mpf(d2)
    return mp.betainc(d2 / 2, d1 / 2, 0, d2 / (d2 + d1 * f), regularized=True)


def chisq_upper(x, k):
    return mp.gammainc(mp.mpf(k) / 2, mp.mpf(x) / 2, mp.inf, regularized=True)


def normal_upper(z):
    return mp.erfc(mp.mpf(z) / mp.sqrt(2)) / 2


with open(PATH) as fh:
    doc = json.load(fh)
doc["mpmathSource"] = "mpmath %s at %d digits (betainc, gammainc, erfc)" % (mp.__version__, mp.mp.dps)
for c in doc["t"]:
    c["mp"] = float(t_upper(c["t"], c["df"]))
for c in doc["f"]:
    c["mp"] = float(f_upper(c["f"], c["df1"], c["df2"]))
for c in doc["chisq"]:
    c["mp"] = float(chisq_upper(c["x"], c["df"]))
for c in doc["normal"]:
    c["mp"] = float(normal_upper(c["z"]))
with open(PATH, "w") as fh:
    json.dump(doc, fh, separators=(",", ":"))
    fh.write("\n")
