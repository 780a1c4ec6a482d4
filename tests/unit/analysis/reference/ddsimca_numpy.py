# Reference values for tests/unit/analysis/ddsimca-oracle.test.ts: DD-SIMCA acceptance recomputed independently with
# NumPy/SciPy from the published formulas (Pomerantsev 2008, J. Chemometrics 22:601-609; Pomerantsev & Rodionova 2014),
# on the open gasoline NIR data (Kalivas 1997, fixtures/open/gasoline_nir.csv):
#   python3 tests/unit/analysis/reference/ddsimca_numpy.py > tests/unit/analysis/reference/ddsimca_numpy.json
# Model: spectra 1-50, column-centred, PCA by SVD with A = 3; limits from the fitted (training) distances.
#   score distance h = sum_a t_a^2 / lambda_a with lambda_a = s_a^2 / (n - 1); orthogonal distance v = ||x - t P'||^2;
#   method of moments: x0 = mean(x), N = max(1, round(2 x0^2 / var(x, ddof=1)));
#   c = Nh h / h0 + Nq v / v0; accepted when c <= c_crit = chi2.ppf(1 - alpha, Nh + Nq), alpha = 0.01 (family).
# Spectra 46-50 (training objects) and 51-60 (new objects) are screened. The suite reads the JSON only.
import csv, json, sys
import numpy as np
import scipy
from scipy.stats import chi2

with open('fixtures/open/gasoline_nir.csv') as f:
    rows = list(csv.reader(f))
X = np.array([[float(v) for v in r[2:]] for r in rows[1:]])
ids = [r[0] for r in rows[1:]]
train, new = X[:50], X[45:]
A, alpha = 3, 0.01
mean = train.mean(axis=0)
Xc = train - mean
U, s, Vt = np.linalg.svd(Xc, full_matrices=False)
P = Vt[:A].T
lam = s[:A] ** 2 / (train.shape[0] - 1)

def distances(Z):
    T = (Z - mean) @ P
    h = ((T ** 2) / lam).sum(axis=1)
    R = (Z - mean) - T @ P.T
    v = (R ** 2).sum(axis=1)
    return h, v

def moments(x):
    x0 = x.mean()
    return x0, max(1, int(round(2 * x0 ** 2 / x.var(ddof=1))))

h, v = distances(train)
h0, Nh = moments(h)
v0, Nq = moments(v)
c_crit = chi2.ppf(1 - alpha, Nh + Nq)
hn, vn = distances(new)
cn = Nh * hn / h0 + Nq * vn / v0
out = {
    'generator': f'numpy {np.__version__}, scipy {scipy.__version__}',
    'components': A, 'alpha': alpha, 'eigenvalues': lam.tolist(),
    'h0': h0, 'Nh': Nh, 'v0': v0, 'Nq': Nq, 'cCrit': c_crit,
    'new': [{'id': ids[45 + i], 'h': float(hn[i]), 'v': float(vn[i]), 'c': float(cn[i]), 'accepted': bool(cn[i] <= c_crit)} for i in range(len(new))]
}
json.dump(out, sys.stdout, indent=1)
sys.stdout.write('\n')
