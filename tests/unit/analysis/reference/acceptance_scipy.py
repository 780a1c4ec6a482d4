# Reference values for tests/unit/analysis/acceptance.test.ts, computed with SciPy 1.17.1:
#   python3 tests/unit/analysis/reference/acceptance_scipy.py
from scipy.stats import binom, beta
for n, a in [(60, 0.05), (30, 0.05), (120, 0.01), (90, 0.01), (10, 0.05)]:
    print(f"binom.ppf(0.95, {n}, {a}) = {int(binom.ppf(0.95, n, a))}")
for x, n in [(12, 12), (11, 12), (9, 10)]:
    print(f"Clopper-Pearson 95 % lower bound {x}/{n} = beta.ppf(0.025, {x}, {n - x + 1}) = {beta.ppf(0.025, x, n - x + 1):.10f}")
