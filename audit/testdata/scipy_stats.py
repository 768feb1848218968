"""Reference values for audit/stats_test.go, computed with SciPy.

Reads a JSON list of cases from standard input, each {"kind": ..., "args": [...]},
and writes one JSON list of p-values or [low, high] intervals:
  binom-upper  [k, n, p]     scipy.stats.binom.sf(k - 1, n, p)          P(X >= k)
  fisher-greater [a, b, c, d]  scipy.stats.fisher_exact(alternative="greater")
  fisher-two   [a, b, c, d]  scipy.stats.fisher_exact(alternative="two-sided")
  fisher-less  [a, b, c, d]  scipy.stats.fisher_exact(alternative="less")
  sign         [pos, neg]    scipy.stats.binomtest(pos, pos+neg, 0.5, alternative="greater")
  sign-two     [pos, neg]    scipy.stats.binomtest(pos, pos+neg, 0.5).pvalue (two-sided: the exact McNemar test)
  wilson       [k, n]        scipy.stats.binomtest(k, n).proportion_ci(0.95, "wilson")
  exact        [k, n]        scipy.stats.binomtest(k, n).proportion_ci(0.95, "exact") (Clopper-Pearson)
"""
import json
import sys

from scipy import stats

out = []
for case in json.load(sys.stdin):
    kind, a = case["kind"], case["args"]
    if kind == "binom-upper":
        out.append(float(stats.binom.sf(a[0] - 1, a[1], a[2])))
    elif kind == "fisher-greater":
        out.append(float(stats.fisher_exact([[a[0], a[1]], [a[2], a[3]]], alternative="greater")[1]))
    elif kind == "fisher-less":
        out.append(float(stats.fisher_exact([[a[0], a[1]], [a[2], a[3]]], alternative="less")[1]))
    elif kind == "fisher-two":
        out.append(float(stats.fisher_exact([[a[0], a[1]], [a[2], a[3]]], alternative="two-sided")[1]))
    elif kind == "sign":
        out.append(float(stats.binomtest(a[0], a[0] + a[1], 0.5, alternative="greater").pvalue))
    elif kind == "sign-two":
        out.append(float(stats.binomtest(a[0], a[0] + a[1], 0.5).pvalue))
    elif kind == "wilson":
        ci = stats.binomtest(a[0], a[1]).proportion_ci(confidence_level=0.95, method="wilson")
        out.append([float(ci.low), float(ci.high)])
    elif kind == "exact":
        ci = stats.binomtest(a[0], a[1]).proportion_ci(confidence_level=0.95, method="exact")
        out.append([float(ci.low), float(ci.high)])
    else:
        raise SystemExit("unknown kind " + kind)
json.dump(out, sys.stdout)
