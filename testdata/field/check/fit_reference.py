#!/usr/bin/python3
"""Independent reference values for maserpol's FitZeeman (runs/interpret/field.go).

Written from the equations with NumPy/SciPy, not from the Go code:
  V = A dI/dv + C I, weighted least squares with weights 1/sigma_V^2 over a
  velocity window; dI/dv by the five-point central difference on the uniform
  grid (three-point next to the ends, one-sided at the ends);
  covariance of (A, C): M X^T W S W X M with M = (X^T W X)^-1 and S the noise
  covariance, S = sigma^2 I for independent channels, S = sigma^2 R with the
  Toeplitz correlation R (1, 2/3, 1/6, 0, ...) of Hanning-smoothed channels.

Input: the invented spectrum ../spectra/C12-02.ecsv (velocity_kms, I, V),
sigma_V = 0.005 Jy per channel, window -2.0 .. 3.8 km/s.
Run (Debian: apt-get install python3-numpy python3-scipy):

    cd testdata/field/check && /usr/bin/python3 fit_reference.py > fit_values.csv
"""
import numpy as np
from scipy.linalg import toeplitz

SIGMA = 0.005
LO, HI = -2.0, 3.8  # km/s

rows = [l for l in open("../spectra/C12-02.ecsv") if not l.startswith("#")]
head = rows[0].strip().split(",")
data = np.array([[float(x) for x in r.strip().split(",")] for r in rows[1:]])
v = data[:, head.index("velocity_kms")] * 1e3  # m/s
I = data[:, head.index("I")]
V = data[:, head.index("V")]
n = len(v)
h = (v[-1] - v[0]) / (n - 1)

d = np.empty(n)
d[0] = (I[1] - I[0]) / (v[1] - v[0])
d[-1] = (I[-1] - I[-2]) / (v[-1] - v[-2])
for k in range(1, n - 1):
    if 2 <= k < n - 2:
        d[k] = (-I[k + 2] + 8 * I[k + 1] - 8 * I[k - 1] + I[k - 2]) / (12 * h)
    else:
        d[k] = (I[k + 1] - I[k - 1]) / (v[k + 1] - v[k - 1])

sel = (v >= LO * 1e3) & (v <= HI * 1e3)
X = np.column_stack([d[sel], I[sel]])
y = V[sel]
w = np.full(len(y), 1 / SIGMA**2)
W = np.diag(w)
beta, *_ = np.linalg.lstsq(X * np.sqrt(w)[:, None], y * np.sqrt(w), rcond=None)
M = np.linalg.inv(X.T @ W @ X)
m = len(y)
rho = np.zeros(m)
rho[:3] = [1, 2 / 3, 1 / 6]
S = SIGMA**2 * toeplitz(rho)
cov_h = M @ X.T @ W @ S @ W @ X @ M
chi2 = float(np.sum(((y - X @ beta) / SIGMA) ** 2))
print("# fit_reference.py: V = A dI/dv + C I on spectra/C12-02.ecsv, sigma_V 0.005, window -2.0..3.8 km/s")
print("n,A_ms,C,A_err_indep_ms,A_err_hanning_ms,inflation,chi2")
print(f"{m},{beta[0]!r},{beta[1]!r},{np.sqrt(M[0, 0])!r},{np.sqrt(cov_h[0, 0])!r},{np.sqrt(cov_h[0, 0] / M[0, 0])!r},{chi2!r}")
