# Reference values for tests/unit/analysis/preprocess-oracle.test.ts, computed with NumPy and SciPy on the open
# gasoline NIR data (Kalivas 1997, fixtures/open/gasoline_nir.csv: 60 spectra, 900-1700 nm every 2 nm):
#   python3 tests/unit/analysis/reference/preprocess_numpy.py > tests/unit/analysis/reference/preprocess_numpy.json
# The test suite reads the JSON only; it never needs Python.
#   SNV: (x - mean) / std(ddof=1) (Barnes et al. 1989).
#   MSC: x = a + b*m by least squares against m = the mean of the 60 spectra (numpy.polyfit), then (x - a) / b.
#   detrend(2): x minus its least-squares quadratic in the wavelength (numpy.polynomial.Polynomial.fit).
#   Savitzky-Golay: scipy.signal.savgol_filter(x, window, polyorder, deriv, delta=2.0, mode='interp'), edges included.
import csv, json, sys
import numpy as np
import scipy
from scipy.signal import savgol_filter

with open('fixtures/open/gasoline_nir.csv') as f:
    rows = list(csv.reader(f))
axis = np.array([float(v) for v in rows[0][2:]])
X = np.array([[float(v) for v in r[2:]] for r in rows[1:]])
picks = [0, 17, 59]
points = [0, 1, 2, 3, 4, 5, 100, 200, 300, 395, 396, 397, 398, 399, 400]

def at(v):
    return [float(v[j]) for j in points]

ref = X.mean(axis=0)
out = {
    'generator': f'numpy {np.__version__}, scipy {scipy.__version__}',
    'points': points,
    'spectra': picks,
    'snv': {}, 'msc': {}, 'detrend2': {}, 'savgol': {}
}
for i in picks:
    x = X[i]
    out['snv'][i] = at((x - x.mean()) / x.std(ddof=1))
    b, a = np.polyfit(ref, x, 1)
    out['msc'][i] = at((x - a) / b)
    fit = np.polynomial.Polynomial.fit(axis, x, 2)
    out['detrend2'][i] = at(x - fit(axis))
    for (w, p, d) in [(11, 2, 0), (11, 2, 1), (15, 3, 2)]:
        out['savgol'].setdefault(f'{w},{p},{d}', {})[i] = at(savgol_filter(x, w, p, deriv=d, delta=2.0, mode='interp'))
json.dump(out, sys.stdout, indent=1)
sys.stdout.write('\n')
