#!/usr/bin/python3
"""Independent NumPy/SciPy reference of the populations-only maser model, J=1-0.

Written from the equations of physics.md sections 3-6 (rate equations and Stokes
transfer) and the documented grid of package transfer, not from the Go code.
It solves every model of study.toml beside it and prints one row per model and
checkpoint (values.csv), or, with --time, only the time after the imports.
cmd/maserpol's BenchmarkSpeedAgainstSciPy times it as a whole process.

Model (dimensionless: rates in units of Gamma = Gamma_u = Gamma_l, Stokes in
saturation units, path s in unsaturated line-centre gain):
- Levels J=1 (m = -1, 0, +1) and J=0; the Zeeman term -mu_N B g J_z puts the
  line of upper sublevel m at nu0 - g (mu_N/h) B m, i.e. at radio velocity
  v_m = c g (mu_N/h) B m / nu0 (mu_N/h = 7.622593229 MHz/T, CODATA 2018).
  q = m; each upper sublevel has one route to J=0, so the sum rule gives S = 1.
- Weights (physics.md section 3, times 3 so that the direction-averaged rate of
  an unpolarized beam is the scalar one): q = 0: (sin^2/2, sin^2/2, 0);
  q = +-1: ((1+cos^2)/4, -sin^2/4, +-cos/2) on (I, Q_f, V).
- Channels and classes share one grid: N points from min(v_m) - 4 v_D to
  max(v_m) + 4 v_D. Class u meets line m in the channel at u + v_m; the off-grid
  spectrum is read with the uniform cubic B-spline kernel (4 points), and the
  inversions go back to the channels with its transpose.
- Per class: 0 = lambda_a - n_a - sum_b R_ab (n_a - n_b) (upper),
  0 = lambda_b - n_b + sum_a R_ab (n_a - n_b) (lower), lambda_a = exp(-(u/v_D)^2),
  lambda_b = 0, R_ab = 3 S_ab (w_I I + w_Q Q + w_V V) at the line's channel.
  The upper side is diagonal and is eliminated; the lower system is solved
  (numpy batched solve, one per class).
- dS/ds = K S per channel, K = [[eI, eQ, eU, eV], [eQ, eI, 0, 0],
  [eU, 0, eI, 0], [eV, 0, 0, eI]] (no magneto-optical terms), e_X =
  kappa sum_m 3 S w_X^m (n_a - n_b) on the channels, kappa such that the
  unsaturated e_I (n_a = lambda_a, n_b = 0) peaks at 1 over the channels.
- Seed: unpolarized, I0 = T_seed dOmega / (4 pi h nu0 Gamma / (A k)).
- Saturation: the largest R_ab over the lines for the class u = 0, with the
  channel spectrum read at v_m by linear interpolation. This one convention
  was taken from the program's source (its documentation says only "at the
  profile centre"); read through the kernel instead, the peak intensity at
  a given saturation comes out 0.4 % higher. Checkpoints at first x 10^(i/per_decade)
  up to the target; the state there is found by event location on the solver's
  dense output.
- Integration: scipy solve_ivp (DOP853) on (ln I, Q/I, U/I, V/I) per channel, so
  that one relative tolerance means the same from the seed to the saturated core.

Reported per checkpoint: saturation, gain (= s), TbdOmega_Ksr (peak I in K sr),
ml, qb (Q_f/I at the peak channel), pv ((V_max - V_min)/I_peak), vi_peak.

Run (Debian: apt-get install python3-numpy python3-scipy; Python >= 3.11):

    cd testdata/speed && /usr/bin/python3 reference.py --rtol 1e-10 --atol 1e-13 > values.csv
    /usr/bin/python3 reference.py --rtol 1e-4 --atol 1e-7 --time   # the benchmark's settings

values.csv is converged to about 1e-8 in every column (a ladder of rtol from
1e-3 to 1e-10). At rtol 1e-4 (the speed benchmark) the error against it is
q_b 3.3e-5 and P_V 6.3e-4 relative, about that of the program at its default
tolerance.
"""
import argparse
import math
import os
import sys
import time
import tomllib

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

T0 = time.perf_counter()
HERE = os.path.dirname(os.path.abspath(__file__))

H = 6.62607015e-34  # J s (SI, exact)
K_B = 1.380649e-23  # J/K (SI, exact)
C = 299792458.0  # m/s (exact)
MU_N_H = 7.622593229e6  # Hz/T, mu_N/h (CODATA 2018)

UNITS = {"G": 1e-4, "mG": 1e-7, "T": 1.0,  # to tesla
         "deg": math.pi / 180, "rad": 1.0,
         "km/s": 1e3, "m/s": 1.0,
         "MHz": 1e6, "GHz": 1e9, "Hz": 1.0,
         "K": 1.0, "sr": 1.0}


def quantity(s):
    """'10 G' -> value in SI (tesla, rad, m/s, Hz); only the units used here."""
    num, unit = s.split()
    return float(num) * UNITS[unit]


def as_list(v):
    return v if isinstance(v, list) else [v]


def bspline(x):
    """Uniform cubic B-spline at offset x (grid units), support |x| < 2."""
    a = np.abs(x)
    return np.where(a < 1, (4 - 6 * a**2 + 3 * a**3) / 6,
                    np.where(a < 2, (2 - a)**3 / 6, 0.0))


def linear(v, x):
    """Row of linear-interpolation weights of position x on grid v."""
    dv = v[1] - v[0]
    return np.maximum(0.0, 1.0 - np.abs(x - v) / dv)


def kernel(v, at):
    """Matrix W[k, j]: the value at position at[k] read from grid v."""
    dv = v[1] - v[0]
    return bspline((at[:, None] - v[None, :]) / dv)


class J10:
    def __init__(self, sp, field, theta, vD, n, first, per_decade, target, seed_tb, domega, rtol, atol, method):
        nu0 = quantity(sp["frequency"])
        g = float(sp["upper"]["g"])
        self.m = np.array([-1.0, 0.0, 1.0])
        self.vline = C * g * MU_N_H * field * self.m / nu0  # m/s
        self.v = np.linspace(self.vline.min() - 4 * vD, self.vline.max() + 4 * vD, n)
        s2, c = math.sin(theta)**2, math.cos(theta)
        w = {0: (s2 / 2, s2 / 2, 0.0), 1: ((1 + c * c) / 4, -s2 / 4, c / 2), -1: ((1 + c * c) / 4, -s2 / 4, -c / 2)}
        # 3 S w per line on (I, Q, U, V); S = 1 for every line of J=1-0.
        self.w = np.array([[3 * w[int(q)][0], 3 * w[int(q)][1], 0.0, 3 * w[int(q)][2]] for q in self.m])
        # Kernel of line m stacked: rows (m, class k), columns channels j.
        self.W = np.vstack([kernel(self.v, self.v + vm) for vm in self.vline])  # (3n, n)
        self.WT = self.W.T.copy()
        # Saturation probe: the channel spectrum at v_m by linear interpolation.
        self.W0 = np.vstack([linear(self.v, vm) for vm in self.vline])
        # Beyond the grid the spectrum is the seed: the kernel weight that
        # falls outside reads it.
        self.wout = 1.0 - self.W.sum(1)
        self.lam = np.exp(-(self.v / vD)**2)
        self.n = n
        # kappa: unsaturated e_I peaks at 1 over the channels.
        eI0 = self.WT @ (np.repeat(self.w[:, 0], n) * np.tile(self.lam, 3))
        self.kappa = 1.0 / eI0.max()
        tsat = 4 * math.pi * H * nu0 / (float(sp["einstein_a"]) * K_B)  # K sr per unit I (Gamma = 1 s^-1)
        self.tsat = tsat
        self.seed = seed_tb * domega / tsat
        self.seedS = np.array([self.seed, 0.0, 0.0, 0.0])
        self.levels = first * 10.0**(np.arange(0, 1 + math.floor(per_decade * math.log10(target / first) + 1e-9)) / per_decade)
        self.first, self.per_decade, self.target = first, per_decade, target
        self.rtol, self.atol = rtol, atol
        self.method = method

    def stokes(self, y):
        n = self.n
        I = np.exp(y[:n])
        return np.stack([I, y[n:2 * n] * I, y[2 * n:3 * n] * I, y[3 * n:] * I], axis=1)  # (n, 4)

    def inversions(self, S):
        n = self.n
        Sc = (self.W @ S + self.wout[:, None] * self.seedS).reshape(3, n, 4)  # Stokes each class sees on each line
        R = np.einsum("mx,mkx->km", self.w, Sc)  # (classes, lines), units of Gamma
        # Eliminate the upper side: n_a = (lambda_a + R_a n_b)/(1 + R_a).
        D = 1.0 + R
        lam = self.lam[:, None]
        M = (1.0 + R.sum(1) - (R * R / D).sum(1))[:, None, None]  # lower system, 1x1 per class
        rhs = ((R * lam / D).sum(1))[:, None]  # lambda_b = 0
        nb = np.linalg.solve(M, rhs)[:, 0]
        na = (lam + R * nb[:, None]) / D
        return na - nb[:, None]  # (classes, lines)

    def rhs(self, s, y):
        n = self.n
        S = self.stokes(y)
        dn = self.inversions(S)
        # e_X on the channels: transpose kernel of (3 S w_X) x inversion.
        eta = self.kappa * (self.WT @ (dn.T.reshape(3 * n, 1) * np.repeat(self.w, n, axis=0)))  # (n, 4)
        eI, eQ, eU, eV = eta.T
        q, u, v = y[n:2 * n], y[2 * n:3 * n], y[3 * n:]
        dl = eI + eQ * q + eU * u + eV * v
        pol = eQ * q + eU * u + eV * v
        return np.concatenate([dl, eQ - q * pol, eU - u * pol, eV - v * pol])

    def saturation(self, y):
        S = self.stokes(y)
        R = np.einsum("mx,mx->m", self.w, self.W0 @ S)
        return R.max()

    def run(self):
        n = self.n
        y0 = np.concatenate([np.full(n, math.log(self.seed)), np.zeros(3 * n)])

        def end(s, y):
            return math.log(self.saturation(y) / self.target)
        end.terminal = True
        end.direction = 1
        sol = solve_ivp(self.rhs, (0, 1e9), y0, method=self.method, rtol=self.rtol, atol=self.atol,
                        events=end, dense_output=True)
        if sol.status != 1:
            raise SystemExit(f"reference: integration stopped before saturation {self.target}: {sol.message}")
        # Each checkpoint level inside a step is located on the step's dense
        # output (saturation grows monotonically along the column).
        ts = sol.t
        lsat = np.array([math.log(self.saturation(y)) for y in sol.y.T])
        rows = []
        for i, level in enumerate(self.levels):
            ll = math.log(level)
            if i == len(self.levels) - 1 and abs(level - self.target) < 1e-9 * self.target:
                s = sol.t_events[0][0]
            else:
                j = int(np.searchsorted(lsat, ll))
                if j == 0 or j >= len(ts):
                    raise SystemExit(f"reference: level {level} not bracketed")
                s = brentq(lambda t: math.log(self.saturation(sol.sol(t))) - ll, ts[j - 1], ts[j], xtol=1e-12, rtol=1e-12)
            y = sol.sol(s)
            S = self.stokes(y)
            p = int(np.argmax(S[:, 0]))
            Ip = S[p, 0]
            rows.append((i, self.saturation(y), s, Ip * self.tsat, math.hypot(S[p, 1], S[p, 2]) / Ip, S[p, 1] / Ip,
                         (S[:, 3].max() - S[:, 3].min()) / Ip, S[p, 3] / Ip))
        return rows, sol.nfev


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--study", default=os.path.join(HERE, "study.toml"))
    ap.add_argument("--rtol", type=float, default=1e-7)
    ap.add_argument("--atol", type=float, default=1e-10)
    ap.add_argument("--method", default="DOP853", help="solve_ivp method (DOP853, RK45, RK23)")
    ap.add_argument("--channels", type=int, default=0, help="override line.channels (convergence checks)")
    ap.add_argument("--time", action="store_true", help="print only the elapsed wall time in seconds")
    a = ap.parse_args()
    with open(a.study, "rb") as f:
        st = tomllib.load(f)
    with open(os.path.join(HERE, "..", "..", "levels", "species", "presets", st["species"] + ".toml"), "rb") as f:
        sp = tomllib.load(f)
    if sp["upper"]["J"] != 1 or sp["lower"]["J"] != 0 or "upper_f" in sp:
        raise SystemExit("reference: only J=1-0 without hyperfine structure")
    field = quantity(st["field"]["strength"])
    col = st["column"]
    out = []
    nfev = 0
    for k, th in enumerate(as_list(st["field"]["theta"])):
        model = J10(sp, field, quantity(th), quantity(st["line"]["doppler"]),
                    a.channels or st["line"]["channels"], col.get("first_checkpoint", 1e-3),
                    col.get("checkpoints_per_decade", 8), col["saturation"],
                    quantity(st["seed"]["tb"]), quantity(st["beam"]["solid_angle"]), a.rtol, a.atol, a.method)
        rows, nf = model.run()
        nfev += nf
        out += [(f"m{k:04d}", quantity(th) * 180 / math.pi) + r for r in rows]
    if a.time:
        print(f"{time.perf_counter() - T0:.4f}")
        print(f"reference: {len(out)} checkpoints, {nfev} right-hand sides", file=sys.stderr)
        return
    print("# made by reference.py from study.toml (physics.md sections 3-6); rtol %g atol %g" % (a.rtol, a.atol))
    print("model,theta_deg,checkpoint,saturation,gain,TbdOmega_Ksr,ml,qb,pv,vi_peak")
    for r in out:
        print("%s,%.6g,%d,%.10g,%.10g,%.10g,%.10g,%.10g,%.10g,%.10g" % r)


if __name__ == "__main__":
    main()
