#!/usr/bin/python3
"""Independent density-matrix reference for polarized maser transfer (physics.md section 8).

Written from the equations of the specification with numpy + scipy only, without reference to
the Go implementation, so that the two can check each other. Run from this directory:

    /usr/bin/python3 reference.py                 # writes values.csv (channels N = 201)
    /usr/bin/python3 reference.py --channels 401  # the same at twice the resolution
    /usr/bin/python3 reference.py --converge      # N and 2N-1, prints the changes, no file
    /usr/bin/python3 reference.py --interp cubic --no-symmetry --out values_cubic.csv

Model (dimensionless): rates in units of Gamma = 1, velocities in Doppler widths, intensities in
saturation units. Two rotational levels J_u -> J_l without hyperfine structure, Zeeman energies
omega(m) = g_omega m in both levels, sigma shift `shift` (Doppler widths); line ab resonates with
class u at channel velocity u + x_ab, x_ab = -shift (m_u - m_l). Pump phi(u) = exp(-u^2) into
every upper sublevel; no pump into the lower level. The density matrices rho_u, rho_l of every
velocity class are solved exactly (complex linear system, all coherences kept) at every
right-hand-side evaluation of the transfer equation, which scipy's DOP853 integrates. Values
between grid points: linear interpolation (the model statement); `--interp cubic` is a diagnostic.
Magneto-optical (dispersive) terms are neglected in both the rates and the propagation.
"""
import argparse
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.interpolate import CubicSpline
from sympy import Rational
from sympy.physics.wigner import wigner_3j

SEED_I = 1e-6
INTERP = 'linear'  # 'linear' (np.interp, the model statement) or 'cubic' (diagnostic, --interp)


def interp(x, xp, fp, left, right):
    """Interpolate fp(xp) at x; constant `left`/`right` outside [xp[0], xp[-1]]."""
    if INTERP == 'linear':
        return np.interp(x, xp, fp, left=left, right=right)
    y = CubicSpline(xp, fp)(np.clip(x, xp[0], xp[-1]))
    return np.where(x < xp[0], left, np.where(x > xp[-1], right, y))


TARGETS = 10.0 ** np.arange(0.0, 4.01, 0.5)  # saturation R/Gamma: 1, 10^0.5, ..., 1e4


# ----------------------------------------------------------------------------------------------
# Level structure and geometry
# ----------------------------------------------------------------------------------------------
def sublevels(j):
    return np.arange(-j, j + 1)


def amplitudes(ju, jl):
    """A[a, b] = sqrt(2J_u+1) (-1)^(J_u-m_u) (J_u 1 J_l; -m_u q m_l), q = m_u - m_l."""
    mu, ml = sublevels(ju), sublevels(jl)
    A = np.zeros((len(mu), len(ml)))
    for a, m_u in enumerate(mu):
        for b, m_l in enumerate(ml):
            q = m_u - m_l
            if abs(q) > 1:
                continue
            w = wigner_3j(Rational(ju), 1, Rational(jl), Rational(-m_u), Rational(q), Rational(m_l))
            A[a, b] = np.sqrt(2 * ju + 1) * (-1) ** (ju - m_u) * float(w)
    assert np.allclose((A ** 2).sum(axis=1), 1.0), "sum rule sum_b S_ab = 1"
    return A, np.subtract.outer(mu, ml)


def pol_vectors(theta):
    """u_q = (e_q^* . e_1, e_q^* . e_2) for q = -1, 0, +1 (indexed q + 1)."""
    c, s = np.cos(theta), np.sin(theta)
    return np.array([[-c, -1j], [np.sqrt(2) * s, 0.0], [c, -1j]]) / np.sqrt(2)


def weights(theta):
    """(w_I, w_Q, w_V) per q (index q + 1), physics.md section 3."""
    c, s = np.cos(theta), np.sin(theta)
    wsig = lambda sgn: [(1 + c * c) / 4, -s * s / 4, sgn * c / 2]
    return np.array([wsig(-1), [s * s / 2, s * s / 2, 0.0], wsig(+1)])


def coherency(S):
    """J = (1/2)[[I+Q, U-iV], [U+iV, I-Q]] from Stokes S[..., 4] -> J[..., 2, 2]."""
    I, Q, U, V = S[..., 0], S[..., 1], S[..., 2], S[..., 3]
    J = np.empty(S.shape[:-1] + (2, 2), complex)
    J[..., 0, 0], J[..., 1, 1] = (I + Q) / 2, (I - Q) / 2
    J[..., 0, 1], J[..., 1, 0] = (U - 1j * V) / 2, (U + 1j * V) / 2
    return J


# ----------------------------------------------------------------------------------------------
# The model: rate tensor, class solution, gain matrix
# ----------------------------------------------------------------------------------------------
class Model:
    def __init__(self, ju, jl, theta_deg, g_omega, shift, nchan, density=True):
        self.ju, self.jl, self.density = ju, jl, density
        self.theta = np.radians(theta_deg)
        self.g_omega, self.shift = g_omega, shift
        A, q = amplitudes(ju, jl)
        self.nu, self.nl = A.shape
        self.S, self.q = A ** 2, q
        allowed = np.abs(q) <= 1
        uq = pol_vectors(self.theta)
        # c[a, b, i]: dipole 2-vector of line ab (zero for forbidden pairs)
        self.c = np.where(allowed[..., None], A[..., None] * uq[np.clip(q, -1, 1) + 1], 0)
        self.w = weights(self.theta)
        # Lines are grouped by the pair index k = q1 + q2 + 2 (0..4): a pair of lines resonates
        # at the mean x = -shift (q1 + q2)/2, the same for every pair with that k.
        self.offsets = -shift * (np.arange(5) - 2) / 2.0
        hi = 4 + 3 * shift
        self.v = np.linspace(-hi, hi, nchan)
        self.phi = np.exp(-self.v ** 2)
        c, cc = self.c, self.c.conj()
        kq = q[:, :, None, None] + q[None, None, :, :] + 2  # [a, b, a', b']
        both = allowed[:, :, None, None] & allowed[None, None, :, :]
        # G4[n, a, b, a', b'] = sum_k sum_ij Gt[k, a, b, a', b', i, j] J_k[n, i, j]
        Gt = 3 * np.einsum('abi,cdj->abcdij', c, cc)
        self.Gt = np.stack([np.where(((kq == k) & both)[..., None, None], Gt, 0) for k in range(5)])
        # Gain-matrix tensors: upper term lines (a,b),(a',b); lower term lines (a,b'),(a,b).
        up = 3 * np.einsum('abi,cbj->abcij', c, cc)     # [a, b, a', i, j], multiplies rho_u(a', a)
        kup = q[:, :, None] + q.T[None, :, :] + 2       # q_ab + q_a'b
        okup = allowed[:, :, None] & allowed.T[None, :, :]
        lo = 3 * np.einsum('aei,abj->abeij', c, cc)     # [a, b, b', i, j], multiplies rho_l(b', b)
        klo = q[:, :, None] + q[:, None, :] + 2         # q_ab + q_ab'
        oklo = allowed[:, :, None] & allowed[:, None, :]
        self.Nup = np.stack([np.where(((kup == k) & okup)[..., None, None], up, 0).sum(1)
                             for k in range(5)])          # [k, a, a', i, j]
        self.Nlo = np.stack([np.where(((klo == k) & oklo)[..., None, None], lo, 0).sum(0)
                             for k in range(5)])          # [k, b, b', i, j]
        wu = g_omega * sublevels(ju)
        wl = g_omega * sublevels(jl)
        self.dwu = np.subtract.outer(wu, wu)
        self.dwl = np.subtract.outer(wl, wl)
        self.min_diag, self.max_herm = np.inf, 0.0
        self.kappa = 1.0
        zero = np.zeros((nchan, 4))
        self.kappa = 1.0 / np.max(self.eta(zero)[:, 0] / 2)

    # Stokes of the channel spectrum at arbitrary velocities; outside the grid: the seed.
    def stokes_at(self, S, vel):
        seed = (SEED_I, 0.0, 0.0, 0.0)
        return np.stack([interp(vel, self.v, S[:, m], seed[m], seed[m])
                         for m in range(4)], axis=-1)

    def rate_tensor(self, S):
        """G4[n, a, b, a', b'] of every class n, each pair at its mean resonance."""
        Jk = np.stack([coherency(self.stokes_at(S, self.v + d)) for d in self.offsets])
        return np.einsum('kabcdij,knij->nabcd', self.Gt, Jk)

    def solve_classes(self, S):
        G = self.rate_tensor(S)
        nc, nu, nl = len(self.v), self.nu, self.nl
        if not self.density:
            return self._solve_populations(G)
        RE = np.einsum('nabcb->nac', G)          # R^E_{aa'} = sum_b G_{ab,a'b}
        RA = np.einsum('nadab->nbd', G)          # R^A_{bb'} = sum_a G_{ab',ab}
        Iu, Il = np.eye(nu), np.eye(nl)
        UU = (-0.5 * np.einsum('nac,bd->nabcd', RE, Iu) - 0.5 * np.einsum('ac,ndb->nabcd', Iu, RE)
              - np.einsum('ac,bd,ab->abcd', Iu, Iu, 1 + 1j * self.dwu)[None])
        LL = (-0.5 * np.einsum('nac,bd->nabcd', RA, Il) - 0.5 * np.einsum('ac,ndb->nabcd', Il, RA)
              - np.einsum('ac,bd,ab->abcd', Il, Il, 1 + 1j * self.dwl)[None])
        UL = np.einsum('nabcd->nacbd', G)        # T^A: (a,a') <- G_{ab,a'b'} rho_l(b,b')
        LU = np.einsum('ncbad->ndbac', G)        # T^S: (b,b') <- G_{a'b',ab} rho_u(a,a')
        du, dl = nu * nu, nl * nl
        M = np.zeros((nc, du + dl, du + dl), complex)
        M[:, :du, :du] = UU.reshape(nc, du, du)
        M[:, :du, du:] = UL.reshape(nc, du, dl)
        M[:, du:, :du] = LU.reshape(nc, dl, du)
        M[:, du:, du:] = LL.reshape(nc, dl, dl)
        rhs = np.zeros((nc, du + dl), complex)
        rhs[:, :du] = -(self.phi[:, None] * Iu.reshape(1, du))
        x = np.linalg.solve(M, rhs[..., None])[..., 0]
        ru, rl = x[:, :du].reshape(nc, nu, nu), x[:, du:].reshape(nc, nl, nl)
        self._record(ru, rl)
        return ru, rl

    def _solve_populations(self, G):
        """Coherences dropped: section 4 rate equations for the diagonal only."""
        Gd = np.einsum('nabab->nab', G).real     # R_ab of every line at its own resonance
        nc, nu, nl = Gd.shape
        M = np.zeros((nc, nu + nl, nu + nl))
        iu, il = np.arange(nu), nu + np.arange(nl)
        M[:, iu, iu] = -1 - Gd.sum(2)
        M[:, il, il] = -1 - Gd.sum(1)
        M[:, :nu, nu:] = Gd
        M[:, nu:, :nu] = Gd.transpose(0, 2, 1)
        rhs = np.zeros((nc, nu + nl))
        rhs[:, :nu] = -self.phi[:, None]
        x = np.linalg.solve(M, rhs[..., None])[..., 0]
        ru = np.einsum('na,ab->nab', x[:, :nu], np.eye(nu)).astype(complex)
        rl = np.einsum('na,ab->nab', x[:, nu:], np.eye(nl)).astype(complex)
        self._record(ru, rl)
        return ru, rl

    def _record(self, ru, rl):
        for r in (ru, rl):
            self.max_herm = max(self.max_herm, np.abs(r - r.conj().transpose(0, 2, 1)).max()
                                / max(np.abs(r).max(), 1e-300))
            self.min_diag = min(self.min_diag, np.einsum('naa->na', r).real.min())

    def eta(self, S, rho=None):
        """(eta_I, eta_Q, eta_U, eta_V) per channel: each pair's term from class v - offset."""
        ru, rl = self.solve_classes(S) if rho is None else rho
        out = np.zeros((len(self.v), 4))
        for k, d in enumerate(self.offsets):
            N = (np.einsum('acij,nca->nij', self.Nup[k], ru)
                 - np.einsum('beij,neb->nij', self.Nlo[k], rl))
            e = np.stack([(N[:, 0, 0] + N[:, 1, 1]).real, (N[:, 0, 0] - N[:, 1, 1]).real,
                          2 * N[:, 0, 1].real, 2 * N[:, 0, 1].imag], axis=-1)
            for m in range(4):
                out[:, m] += interp(self.v - d, self.v, e[:, m], 0.0, 0.0)
        return out

    # The integrated state per channel is (ln I, Q/I, U/I, V/I): all O(1), so one absolute
    # tolerance fits every channel from the seed (1e-6) to the saturated core (1e4).
    def stokes(self, y):
        y = y.reshape(len(self.v), 4)
        I = np.exp(y[:, 0])
        return np.column_stack([I, I[:, None] * y[:, 1:]])

    def rhs(self, s, y):
        y = y.reshape(len(self.v), 4)
        e = self.eta(self.stokes(y)) * (self.kappa / 2)
        f = y[:, 1:]
        dlnI = e[:, 0] + (e[:, 1:] * f).sum(1)     # dS/ds = (kappa/2) K S, divided by I
        return np.column_stack([dlnI, e[:, 1:] + e[:, :1] * f - f * dlnI[:, None]]).ravel()

    def saturation(self, S):
        """max over lines of R_l = 3 S_l (w . Stokes at the line centre x_l), class u = 0."""
        best = 0.0
        for a in range(self.nu):
            for b in range(self.nl):
                q = self.q[a, b]
                if abs(q) > 1 or self.S[a, b] == 0:
                    continue
                st = self.stokes_at(S, np.array([-self.shift * q]))[0]
                w = self.w[q + 1]
                best = max(best, 3 * self.S[a, b] * (w[0] * st[0] + w[1] * st[1] + w[2] * st[3]))
        return best


# ----------------------------------------------------------------------------------------------
# Identities checked before every run
# ----------------------------------------------------------------------------------------------
def self_checks(m, rng):
    nc = len(m.v)
    S = np.column_stack([np.full(nc, 2.0), rng.uniform(-1, 1, (nc, 3)) * 0.5])
    G = m.rate_tensor(S)
    Gd = np.einsum('nabab->nab', G)
    # Diagonal G = 3 S_ab (w_I I + w_Q Q + w_V V) at the line's own resonance.
    for a in range(m.nu):
        for b in range(m.nl):
            q = m.q[a, b]
            if abs(q) > 1:
                continue
            st = m.stokes_at(S, m.v - m.shift * q)
            want = 3 * m.S[a, b] * st[:, [0, 1, 3]] @ m.w[q + 1]
            assert np.allclose(Gd[:, a, b], want, atol=1e-12), "diagonal G vs weights"
    # G is Hermitian as a matrix over line pairs.
    assert np.allclose(G, np.einsum('nabcd->ncdab', G).conj(), atol=1e-12), "G Hermitian"
    # Trace transfer: Tr(R^E rho_u) = Tr(T^S(rho_u)); Tr(R^A rho_l) = Tr(T^A(rho_l)).
    RE, RA = np.einsum('nabcb->nac', G), np.einsum('nadab->nbd', G)
    for dim, R, T in ((m.nu, RE, 'ncbad,nac->ndb'), (m.nl, RA, 'nabcd,nbd->nac')):
        X = rng.normal(size=(nc, dim, dim)) + 1j * rng.normal(size=(nc, dim, dim))
        rho = X + X.conj().transpose(0, 2, 1)
        lhs = np.einsum('nab,nba->n', R, rho)
        rhs = np.einsum('naa->n', np.einsum(T, G, rho))
        assert np.allclose(lhs, rhs, atol=1e-10), "trace transfer"
    # The assembled linear system solves the steady-state equations written out directly.
    if m.density:
        ru, rl = m.solve_classes(S)
        com = lambda dw, r: 1j * dw[None] * r
        acom = lambda R, r: 0.5 * (R @ r + r @ R)
        TA = np.einsum('nabcd,nbd->nac', G, rl)
        TS = np.einsum('ncbad,nac->ndb', G, ru)
        pump = m.phi[:, None, None] * np.eye(m.nu)
        res_u = pump - ru - com(m.dwu, ru) - acom(RE, ru) + TA
        res_l = -rl - com(m.dwl, rl) - acom(RA, rl) + TS
        assert max(np.abs(res_u).max(), np.abs(res_l).max()) < 1e-10, "steady-state residual"
    # Diagonal rho: eta_X/2 = sum_lines 3 w_X S_ab (n_a - n_b) (class level, no velocity shift).
    m0 = Model(m.ju, m.jl, np.degrees(m.theta), m.g_omega, 0.0, nc, density=True)
    na, nb = rng.uniform(0, 1, (nc, m.nu)), rng.uniform(0, 1, (nc, m.nl))
    rho = (np.einsum('na,ab->nab', na, np.eye(m.nu)), np.einsum('na,ab->nab', nb, np.eye(m.nl)))
    e = m0.eta(None, rho) / 2
    want = np.zeros((nc, 4))
    for a in range(m.nu):
        for b in range(m.nl):
            q = m.q[a, b]
            if abs(q) <= 1:
                w = m.w[q + 1]
                want += 3 * m.S[a, b] * np.outer(na[:, a] - nb[:, b], [w[0], w[1], 0.0, w[2]])
    assert np.allclose(e, want, atol=1e-12), "eta reduction for diagonal rho"
    # Energy: for any Hermitian rho and a flat spectrum (no shift), the beam's gain
    # sum_ij N_ij J_ij = (eta . S)/2 equals the net stimulated emission
    # Tr(R^E rho_u) - Tr(R^A rho_l) of the class (the index order of rho in N follows).
    Sf = np.column_stack([np.full(nc, 1.5), rng.uniform(-1, 1, (nc, 3)) * 0.4])
    Gf = m0.rate_tensor(Sf)
    REf, RAf = np.einsum('nabcb->nac', Gf), np.einsum('nadab->nbd', Gf)
    Xu = rng.normal(size=(nc, m.nu, m.nu)) + 1j * rng.normal(size=(nc, m.nu, m.nu))
    Xl = rng.normal(size=(nc, m.nl, m.nl)) + 1j * rng.normal(size=(nc, m.nl, m.nl))
    ru, rl = Xu + Xu.conj().transpose(0, 2, 1), Xl + Xl.conj().transpose(0, 2, 1)
    gain = np.einsum('nk,nk->n', m0.eta(None, (ru, rl)), Sf) / 2
    net = (np.einsum('nab,nba->n', REf, ru) - np.einsum('nab,nba->n', RAf, rl)).real
    assert np.allclose(gain, net, atol=1e-9 * np.abs(net).max()), "energy: beam gain = net stimulated emission"


# ----------------------------------------------------------------------------------------------
# One run: integrate until the last saturation target, record the spectrum at every target
# ----------------------------------------------------------------------------------------------
def run(ju, jl, theta_deg, g_omega, shift, nchan, density, targets=TARGETS):
    m = Model(ju, jl, theta_deg, g_omega, shift, nchan, density)
    self_checks(m, np.random.default_rng(1))
    m.min_diag, m.max_herm = np.inf, 0.0
    y0 = np.column_stack([np.full(nchan, np.log(SEED_I)), np.zeros((nchan, 3))]).ravel()
    events = []
    for i, t in enumerate(targets):
        ev = (lambda s, y, t=t: np.log(m.saturation(m.stokes(y))) - np.log(t))
        ev.direction = 1.0
        ev.terminal = i == len(targets) - 1
        events.append(ev)
    sol = solve_ivp(m.rhs, (0.0, 1e7), y0, method='DOP853', rtol=1e-8, atol=1e-10,
                    events=events)
    if sol.status != 1:
        sys.exit("integration did not reach the last target: %s" % sol.message)
    rows = []
    for i, t in enumerate(targets):
        if len(sol.t_events[i]) == 0:
            sys.exit("saturation %g not reached (it is not monotonic along the path?)" % t)
        s_t, S = sol.t_events[i][0], m.stokes(sol.y_events[i][0])
        p = np.argmax(S[:, 0])
        I, Q, U, V = S[p]
        rows.append(dict(case=None, model='density' if density else 'populations', ju=ju, jl=jl,
                         theta_deg=theta_deg, g_omega=g_omega, shift=shift, saturation=t,
                         r_over_gomega=t / g_omega if g_omega else np.inf, gain=s_t,
                         q_b=Q / I, u_b=U / I,
                         p_v=(S[:, 3].max() - S[:, 3].min()) / I, m_l=np.hypot(Q, U) / I))
    # Positivity and Hermiticity on the accepted solution (rejected trial stages of the
    # integrator may be unphysical and are reported separately).
    trial = m.min_diag
    m.min_diag, m.max_herm = np.inf, 0.0
    for y in sol.y.T:
        m.solve_classes(m.stokes(y))
    print("   %-11s J=%d-%d theta=%g gOmega=%g N=%d: %d steps, %d rhs evaluations, min diag rho "
          "%.3g (all stages %.3g), max rel. anti-Hermitian part %.2g"
          % (rows[0]['model'], ju, jl, theta_deg, g_omega, nchan, len(sol.t), sol.nfev,
             m.min_diag, trial, m.max_herm))
    assert m.min_diag > -1e-12, "negative population in some class"
    assert m.max_herm < 1e-10, "density matrix not Hermitian"
    return rows


CASES = [  # case, ju, jl, theta, g_omega, shift, models
    (1, 1, 0, 60.0, 100.0, 1e-3, (True, False)),
    (2, 1, 0, 30.0, 100.0, 1e-3, (True,)),
    (3, 2, 1, 60.0, 100.0, 1e-3, (True, False)),
    (4, 1, 0, 90.0, 1e4, 1e-3, (False, True)),
]
COLS = ['case', 'model', 'ju', 'jl', 'theta_deg', 'g_omega', 'shift', 'saturation',
        'r_over_gomega', 'gain', 'q_b', 'u_b', 'p_v', 'm_l']


def all_rows(nchan):
    rows = []
    for case, ju, jl, th, go, sh, models in CASES:
        for dens in models:
            for r in run(ju, jl, th, go, sh, nchan, dens):
                r['case'] = case
                rows.append(r)
    return rows


def fmt(r, c):
    x = r[c]
    return str(x) if isinstance(x, (str, int)) else '%.10g' % x


def sanity(rows):
    get = lambda case, model: [r for r in rows if r['case'] == case and r['model'] == model]
    print("sanity checks:")
    for case in (1, 3, 4):
        for d, p in zip(get(case, 'density'), get(case, 'populations')):
            if d['r_over_gomega'] <= 0.01 + 1e-12:
                print("  case %d R/gOmega=%.3g: |dq_b| = %.2e (want < 1e-3), P_V rel. diff = %.2e "
                      "(want < 1e-2)" % (case, d['r_over_gomega'], abs(d['q_b'] - p['q_b']),
                                         abs(d['p_v'] / p['p_v'] - 1) if p['p_v'] else 0.0))
    for r in get(4, 'populations') + get(4, 'density'):
        print("  case 4 %-11s sat=%8.4g: P_V = %.2e (theta=90: want 0), q_b = %+.5f "
              "(GKK -1/3 for R >> Gamma, populations)" % (r['model'], r['saturation'], r['p_v'],
                                                          r['q_b']))
    print("  GKK 1973 populations limit at 60 deg: q_b -> (2 - 3 sin^2)/(3 sin^2) = %+.5f; "
          "case 1 populations at sat 1e4: %+.5f" % (-1 / 9, get(1, 'populations')[-1]['q_b']))
    for case in (1, 3):
        for r in get(case, 'density'):
            p = [x for x in get(case, 'populations') if x['saturation'] == r['saturation']][0]
            print("  case %d R/gOmega=%8.4g: m_l density %.5f, populations %.5f; q_b %+.5f / %+.5f;"
                  " u_b density %+.2e" % (case, r['r_over_gomega'], r['m_l'], p['m_l'], r['q_b'],
                                         p['q_b'], r['u_b']))


def symmetry_checks(nchan):
    """Runs not in values.csv: B = 0 (g_omega = 0, shift = 0) and theta = 0 must stay unpolarized
    in the density model (isotropy / axial symmetry, physics.md section 8); at B = 0 the gain
    to reach a saturation must not depend on the theta chosen for the quantization axis."""
    print("symmetry checks (density model, targets 1, 1e2, 1e4):")
    few = np.array([1.0, 1e2, 1e4])
    for ju, jl, th, go in ((1, 0, 60.0, 0.0), (2, 1, 60.0, 0.0), (1, 0, 0.0, 100.0)):
        rows = run(ju, jl, th, go, 0.0 if go == 0 else 1e-3, nchan, True, few)
        for r in rows:
            print("  J=%d-%d theta=%4.1f gOmega=%5.1f sat=%6.0f: m_l = %.1e (want 0), P_V = %.1e%s"
                  % (ju, jl, th, go, r['saturation'], r['m_l'], r['p_v'],
                     " (want 0)" if go == 0 else ""))
    # Mirror symmetry: reversing B (theta -> 180 deg - theta) flips U and V, keeps I and Q.
    a = run(1, 0, 60.0, 100.0, 1e-3, nchan, True, few[:2])
    b = run(1, 0, 120.0, 100.0, 1e-3, nchan, True, few[:2])
    print("  J=1-0 theta 60 vs 120 deg, gOmega 100, sat 1 and 1e2: max |q_b diff| %.1e, "
          "max |u_b sum| %.1e (u_b %+.4f, %+.4f), max |P_V diff| %.1e (want 0)"
          % (max(abs(x['q_b'] - y['q_b']) for x, y in zip(a, b)),
             max(abs(x['u_b'] + y['u_b']) for x, y in zip(a, b)), a[-1]['u_b'], b[-1]['u_b'],
             max(abs(x['p_v'] - y['p_v']) for x, y in zip(a, b))))
    # Covariance: at B = 0 the spectrum after a fixed path does not depend on theta. (The
    # saturation measure does, through the line weights, so compare at equal s, not equal sat.)
    spec = []
    for th in (60.0, 20.0):
        m = Model(1, 0, th, 0.0, 0.0, nchan, True)
        y0 = np.column_stack([np.full(nchan, np.log(SEED_I)), np.zeros((nchan, 3))]).ravel()
        sol = solve_ivp(m.rhs, (0.0, 400.0), y0, method='DOP853', rtol=1e-8, atol=1e-10)
        spec.append(m.stokes(sol.y[:, -1]))
    print("  B=0 J=1-0 after s=400 (I_peak %.4g): max |S(60 deg) - S(20 deg)| / I_peak = %.1e "
          "(want 0)"
          % (spec[0][:, 0].max(), np.abs(spec[0] - spec[1]).max() / spec[0][:, 0].max()))


def main():
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--channels', type=int, default=201, help='channels = classes (odd)')
    ap.add_argument('--out', default='values.csv')
    ap.add_argument('--converge', action='store_true', help='compare N and 2N-1; no file')
    ap.add_argument('--interp', choices=('linear', 'cubic'), default='linear',
                    help='interpolation in velocity (cubic: diagnostic of the linear-grid error)')
    ap.add_argument('--no-symmetry', action='store_true', help='skip the symmetry runs')
    a = ap.parse_args()
    global INTERP
    INTERP = a.interp
    t0, c0 = time.time(), time.process_time()
    rows = all_rows(a.channels)
    if a.converge:
        fine = all_rows(2 * a.channels - 1)
        print("convergence N=%d -> %d (max abs change over cases and targets):"
              % (a.channels, 2 * a.channels - 1))
        for c in ('gain', 'q_b', 'u_b', 'p_v', 'm_l'):
            d = [abs(r[c] - f[c]) for r, f in zip(rows, fine)]
            rel = [abs(r[c] - f[c]) / abs(f[c]) for r, f in zip(rows, fine) if f[c] != 0]
            print("  %-5s abs %.2e  rel %.2e" % (c, max(d), max(rel) if rel else 0.0))
    else:
        with open(a.out + '.tmp', 'w') as f:
            f.write(','.join(COLS) + '\n')
            for r in rows:
                f.write(','.join(fmt(r, c) for c in COLS) + '\n')
        import os
        os.replace(a.out + '.tmp', a.out)
    sanity(rows)
    if not a.no_symmetry:
        symmetry_checks(a.channels)
    print("run time %.1f s CPU (%.1f s wall clock)" % (time.process_time() - c0, time.time() - t0))


if __name__ == '__main__':
    main()
