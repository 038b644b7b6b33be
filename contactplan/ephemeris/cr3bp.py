"""Circular restricted three-body problem (CR3BP) in normalised units.

Planning approximation, not a flight ephemeris.

Units and frame
    Barycentric rotating frame of two primaries on circular orbits: the larger
    primary (mass 1 - mu) at (-mu, 0, 0), the smaller (mass mu) at (1 - mu, 0, 0),
    z along the orbital angular momentum. Length unit: the primaries' distance;
    time unit: 1/n (n their mean motion), so one revolution takes 2*pi.
    State vectors are (x, y, z, vx, vy, vz) in these units.

Contents
    * equations of motion, with the variational equations for the 6x6 state
      transition matrix (:func:`eom`, :func:`eom_stm`);
    * Jacobi constant (:func:`jacobi`);
    * collinear libration points L1, L2 from the quintic (:func:`collinear_point`);
    * third-order halo approximation after Richardson (1980)
      (:func:`richardson_halo`);
    * differential correction to a periodic halo orbit using the symmetric
      x-z plane crossings after Howell (1984) (:func:`correct_halo`), and the
      cached :func:`halo_orbit` that returns a :class:`HaloOrbit`, a Fourier
      representation of the periodic orbit evaluable at any phase.

The correction integrates with a small numpy extrapolation integrator
(:mod:`contactplan.ephemeris.integrate`); scipy, slow to import, is used only by
:func:`propagate`, kept as an independent reference for the tests.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from contactplan.errors import InputError

#: astronomical unit, km (IAU 2012 Resolution B2)
AU_KM = 149_597_870.7

#: integration tolerances (relative and absolute, normalised units)
RTOL = 1e-13
ATOL = 1e-13


# ---------------------------------------------------------------- dynamics
def _rel(state, mu):
    x, y, z = state[0], state[1], state[2]
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    r1sq = dx1 * dx1 + y * y + z * z
    r2sq = dx2 * dx2 + y * y + z * z
    return x, y, z, dx1, dx2, r1sq, r2sq


def eom(t, state, mu):
    """Time derivative of the state (x, y, z, vx, vy, vz); ``state`` may be (6,) or (6, N)."""
    x, y, z, dx1, dx2, r1sq, r2sq = _rel(state, mu)
    vx, vy, vz = state[3], state[4], state[5]
    k1 = (1.0 - mu) / (r1sq * np.sqrt(r1sq))
    k2 = mu / (r2sq * np.sqrt(r2sq))
    ax = x - k1 * dx1 - k2 * dx2 + 2.0 * vy
    ay = y - (k1 + k2) * y - 2.0 * vx
    az = -(k1 + k2) * z
    return np.array([vx, vy, vz, ax, ay, az])


def potential_hessian(state, mu) -> np.ndarray:
    """Second derivatives of the effective potential Omega at the position of ``state`` (3x3)."""
    x, y, z, dx1, dx2, r1sq, r2sq = _rel(state, mu)
    r1_3 = r1sq * math.sqrt(r1sq)
    r2_3 = r2sq * math.sqrt(r2sq)
    r1_5 = r1_3 * r1sq
    r2_5 = r2_3 * r2sq
    a = (1.0 - mu) / r1_3 + mu / r2_3
    b1 = 3.0 * (1.0 - mu) / r1_5
    b2 = 3.0 * mu / r2_5
    uxx = 1.0 - a + b1 * dx1 * dx1 + b2 * dx2 * dx2
    uyy = 1.0 - a + (b1 + b2) * y * y
    uzz = -a + (b1 + b2) * z * z
    uxy = b1 * dx1 * y + b2 * dx2 * y
    uxz = b1 * dx1 * z + b2 * dx2 * z
    uyz = (b1 + b2) * y * z
    return np.array([[uxx, uxy, uxz], [uxy, uyy, uyz], [uxz, uyz, uzz]])


_CORIOLIS = np.array([[0.0, 2.0, 0.0], [-2.0, 0.0, 0.0], [0.0, 0.0, 0.0]])


def eom_stm(t, s, mu):
    """Derivative of the 42-vector (state, row-major 6x6 STM): dPhi/dt = A(t) Phi."""
    state = s[:6]
    phi = s[6:].reshape(6, 6)
    a = np.zeros((6, 6))
    a[0:3, 3:6] = np.eye(3)
    a[3:6, 0:3] = potential_hessian(state, mu)
    a[3:6, 3:6] = _CORIOLIS
    out = np.empty(42)
    out[:6] = eom(t, state, mu)
    out[6:] = (a @ phi).ravel()
    return out


def jacobi(state, mu):
    """Jacobi constant C = 2*Omega - v^2, Omega = (x^2 + y^2)/2 + (1-mu)/r1 + mu/r2; ``state`` (6,) or (6, N)."""
    state = np.asarray(state, dtype=float)
    x, y, z, dx1, dx2, r1sq, r2sq = _rel(state, mu)
    omega = 0.5 * (x * x + y * y) + (1.0 - mu) / np.sqrt(r1sq) + mu / np.sqrt(r2sq)
    v2 = state[3] ** 2 + state[4] ** 2 + state[5] ** 2
    return 2.0 * omega - v2


# ---------------------------------------------------------------- libration points
def _point_number(point) -> int:
    p = str(point).upper().lstrip("L")
    if p not in ("1", "2"):
        raise InputError(f"libration point must be L1 or L2, not {point!r}")
    return int(p)


def collinear_point(mu: float, point) -> tuple[float, float]:
    """Position of L1 or L2 on the x axis and its distance gamma from the smaller primary.

    gamma solves the quintic (Szebehely 1967, sec. 4.5; signs as recalled from memory)
        L1: g^5 - (3-mu) g^4 + (3-2mu) g^3 - mu g^2 + 2mu g - mu = 0,  x = 1 - mu - g
        L2: g^5 + (3-mu) g^4 + (3-2mu) g^3 - mu g^2 - 2mu g - mu = 0,  x = 1 - mu + g
    solved by Newton's method from the Hill estimate g0 = (mu/3)^(1/3).
    Returns (x_normalised, gamma_normalised).
    """
    n = _point_number(point)
    s = -1.0 if n == 1 else 1.0
    coeffs = [1.0, s * (3.0 - mu), 3.0 - 2.0 * mu, -mu, -s * 2.0 * mu, -mu]
    dcoeffs = [5.0 * coeffs[0], 4.0 * coeffs[1], 3.0 * coeffs[2], 2.0 * coeffs[3], coeffs[4]]
    g = (mu / 3.0) ** (1.0 / 3.0)
    for _ in range(50):
        f = np.polyval(coeffs, g)
        step = f / np.polyval(dcoeffs, g)
        g -= step
        if abs(step) < 1e-16:
            break
    return 1.0 - mu + s * g, g


def mass_ratio_sun_emb() -> float:
    """mu = (GM_earth + GM_moon) / (GM_sun + GM_earth + GM_moon) from the packaged DE421 constants."""
    from contactplan.ephemeris.bodies import gm_km3_s2

    gm = gm_km3_s2()
    emb = gm["earth"] + gm["moon"]
    return emb / (gm["sun"] + emb)


def sun_emb_units() -> tuple[float, float]:
    """(length unit km, time unit s) for the Sun-EMB problem: 1 au and 1/n with n = sqrt(GM_total / au^3)."""
    from contactplan.ephemeris.bodies import gm_km3_s2

    gm = gm_km3_s2()
    total = gm["sun"] + gm["earth"] + gm["moon"]
    return AU_KM, math.sqrt(AU_KM**3 / total)


# ---------------------------------------------------------------- Richardson (1980)
@dataclass(frozen=True)
class RichardsonHalo:
    """Third-order halo approximation (Richardson 1980), lengths in units of gamma about the point."""

    mu: float
    point: int
    gamma: float
    x_point: float
    lam: float  # linear in-plane frequency
    k: float
    ax: float  # in-plane amplitude / gamma
    az: float  # out-of-plane amplitude parameter / gamma
    omega: float  # frequency correction (nonlinear)
    c: tuple  # (a21, a22, a23, a24, a31, a32, b21, b22, b31, b32, d21, d31, d32)

    @property
    def period(self) -> float:
        """Period in normalised time units."""
        return 2.0 * math.pi / (self.lam * self.omega)

    @property
    def linear_period(self) -> float:
        """Period of the linearised motion, 2*pi/lambda, normalised time units."""
        return 2.0 * math.pi / self.lam

    def state(self, tau1, class_sign: float = 1.0) -> np.ndarray:
        """Barycentric rotating state(s) at angle(s) tau1 = lambda*omega*t + phi; shape (6, N).

        ``class_sign`` is Richardson's delta_m (+1 class I, -1 class II).
        """
        a21, a22, a23, a24, a31, a32, b21, b22, b31, b32, d21, d31, d32 = self.c
        ax, az, k, dm = self.ax, self.az, self.k, class_sign
        t = np.atleast_1d(np.asarray(tau1, dtype=float))
        c1, s1 = np.cos(t), np.sin(t)
        c2, s2 = np.cos(2 * t), np.sin(2 * t)
        c3, s3 = np.cos(3 * t), np.sin(3 * t)
        cx2 = a23 * ax**2 - a24 * az**2
        cx3 = a31 * ax**3 - a32 * ax * az**2
        cy2 = b21 * ax**2 - b22 * az**2
        cy3 = b31 * ax**3 - b32 * ax * az**2
        cz2 = d21 * ax * az
        cz3 = d32 * az * ax**2 - d31 * az**3
        x = a21 * ax**2 + a22 * az**2 - ax * c1 + cx2 * c2 + cx3 * c3
        y = k * ax * s1 + cy2 * s2 + cy3 * s3
        z = dm * (az * c1 + cz2 * (c2 - 3.0) + cz3 * c3)
        rate = self.lam * self.omega  # d tau1 / dt
        vx = rate * (ax * s1 - 2 * cx2 * s2 - 3 * cx3 * s3)
        vy = rate * (k * ax * c1 + 2 * cy2 * c2 + 3 * cy3 * c3)
        vz = dm * rate * (-az * s1 - 2 * cz2 * s2 - 3 * cz3 * s3)
        g = self.gamma
        # Richardson's axes: origin at the point, axes parallel to the barycentric ones.
        sx = 1.0
        return np.array(
            [self.x_point + sx * g * x, sx * g * y, g * z, sx * g * vx, sx * g * vy, g * vz]
        )


def richardson_halo(mu: float, point, az_norm: float) -> RichardsonHalo:
    """Richardson's (1980) third-order halo solution about L1/L2 for out-of-plane amplitude ``az_norm``.

    ``az_norm`` is the amplitude parameter A_z in normalised length units. Coefficients
    are those of Richardson (1980), "Analytic construction of periodic orbits about the
    collinear points", Celestial Mechanics 22, as recalled from memory.
    """
    n = _point_number(point)
    x_point, g = collinear_point(mu, n)

    def cn(m):
        if n == 1:
            return (mu + (-1) ** m * (1 - mu) * g ** (m + 1) / (1 - g) ** (m + 1)) / g**3
        return ((-1) ** m * mu + (-1) ** m * (1 - mu) * g ** (m + 1) / (1 + g) ** (m + 1)) / g**3

    c2, c3, c4 = cn(2), cn(3), cn(4)
    # lambda^4 + (c2 - 2) lambda^2 - (c2 - 1)(1 + 2 c2) = 0
    bq = c2 - 2.0
    cq = -(c2 - 1.0) * (1.0 + 2.0 * c2)
    lam = math.sqrt((-bq + math.sqrt(bq * bq - 4.0 * cq)) / 2.0)
    k = (lam**2 + 1 + 2 * c2) / (2 * lam)
    d1 = 3 * lam**2 / k * (k * (6 * lam**2 - 1) - 2 * lam)
    d2 = 8 * lam**2 / k * (k * (11 * lam**2 - 1) - 2 * lam)
    a21 = 3 * c3 * (k**2 - 2) / (4 * (1 + 2 * c2))
    a22 = 3 * c3 / (4 * (1 + 2 * c2))
    a23 = -3 * c3 * lam / (4 * k * d1) * (3 * k**3 * lam - 6 * k * (k - lam) + 4)
    a24 = -3 * c3 * lam / (4 * k * d1) * (2 + 3 * k * lam)
    b21 = -3 * c3 * lam / (2 * d1) * (3 * k * lam - 4)
    b22 = 3 * c3 * lam / d1
    d21 = -c3 / (2 * lam**2)
    a31 = -9 * lam / (4 * d2) * (4 * c3 * (k * a23 - b21) + k * c4 * (4 + k**2)) + (
        9 * lam**2 + 1 - c2
    ) / (2 * d2) * (3 * c3 * (2 * a23 - k * b21) + c4 * (2 + 3 * k**2))
    a32 = -1 / d2 * (
        9 * lam / 4 * (4 * c3 * (k * a24 - b22) + k * c4)
        + 1.5 * (9 * lam**2 + 1 - c2) * (c3 * (k * b22 + d21 - 2 * a24) - c4)
    )
    b31 = 3 / (8 * d2) * (
        8 * lam * (3 * c3 * (k * b21 - 2 * a23) - c4 * (2 + 3 * k**2))
        + (9 * lam**2 + 1 + 2 * c2) * (4 * c3 * (k * a23 - b21) + k * c4 * (4 + k**2))
    )
    b32 = 1 / d2 * (
        9 * lam * (c3 * (k * b22 + d21 - 2 * a24) - c4)
        + 3 / 8 * (9 * lam**2 + 1 + 2 * c2) * (4 * c3 * (k * a24 - b22) + k * c4)
    )
    d31 = 3 / (64 * lam**2) * (4 * c3 * a24 + c4)
    d32 = 3 / (64 * lam**2) * (4 * c3 * (a23 - d21) + c4 * (4 + k**2))
    den = 2 * lam * (lam * (1 + k**2) - 2 * k)
    s1 = (1.5 * c3 * (2 * a21 * (k**2 - 2) - a23 * (k**2 + 2) - 2 * k * b21) - 3 / 8 * c4 * (
        3 * k**4 - 8 * k**2 + 8
    )) / den
    s2 = (1.5 * c3 * (2 * a22 * (k**2 - 2) + a24 * (k**2 + 2) + 2 * k * b22 + 5 * d21) + 3 / 8 * c4 * (
        12 - k**2
    )) / den
    a1 = -1.5 * c3 * (2 * a21 + a23 + 5 * d21) - 3 / 8 * c4 * (12 - k**2)
    a2 = 1.5 * c3 * (a24 - 2 * a22) + 9 / 8 * c4
    l1 = a1 + 2 * lam**2 * s1
    l2 = a2 + 2 * lam**2 * s2
    delta = lam**2 - c2
    az = az_norm / g
    ax2 = (-l2 * az**2 - delta) / l1
    if ax2 <= 0:
        raise InputError(f"no halo orbit of this amplitude about L{n} in the third-order approximation")
    ax = math.sqrt(ax2)
    omega = 1 + s1 * ax**2 + s2 * az**2
    return RichardsonHalo(
        mu, n, g, x_point, lam, k, ax, az, omega,
        (a21, a22, a23, a24, a31, a32, b21, b22, b31, b32, d21, d31, d32),
    )


# ---------------------------------------------------------------- integration
def propagate(state0, t_end: float, mu: float, *, stm: bool = False, t_eval=None, events=None):
    """Integrate from t=0 to ``t_end`` with scipy's DOP853 (8th order) at tight tolerance.

    Not used on the planning path (see :func:`_half_period_crossing`); the tests use it as an
    independent check of the orbits corrected with the numpy integrator."""
    from scipy.integrate import solve_ivp

    y0 = np.asarray(state0, dtype=float)
    if stm:
        y0 = np.concatenate([y0[:6], np.eye(6).ravel()])
        fun = eom_stm
    else:
        fun = eom
    return solve_ivp(
        fun, (0.0, t_end), y0, method="DOP853", rtol=RTOL, atol=ATOL, args=(mu,),
        t_eval=t_eval, events=events, dense_output=False,
    )


def _half_period_crossing(state0, mu, t_guess):
    """Integrate with the STM to the next y = 0 crossing; returns (t, 42-vector at the crossing).

    Uses the numpy extrapolation integrator (:mod:`contactplan.ephemeris.integrate`), not scipy.
    """
    from contactplan.ephemeris.integrate import integrate_to_crossing

    y0 = np.concatenate([np.asarray(state0, dtype=float)[:6], np.eye(6).ravel()])
    direction = -1.0 if state0[4] > 0 else 1.0
    found = integrate_to_crossing(lambda t, y: eom_stm(t, y, mu), y0, 1, direction, 2.0 * t_guess,
                                  t_guess / 8.0, rtol=RTOL, atol=ATOL)
    if found is None:
        raise InputError("halo orbit correction failed: no return to the x-z plane")
    return found


def correct_halo(mu: float, state0, half_period_guess: float, *, tol: float = 1e-12, max_iter: int = 30):
    """Differential correction to a periodic halo orbit (Howell 1984), z0 held fixed.

    The start lies on the x-z plane, state (x0, 0, z0, 0, vy0, 0). x0 and vy0 are
    corrected until the next x-z plane crossing is perpendicular (vx = vz = 0 there),
    which by the problem's symmetry closes the orbit. Returns (state0, period).
    """
    s0 = np.array(state0, dtype=float)
    s0[[1, 3, 5]] = 0.0
    t_half = half_period_guess
    for _ in range(max_iter):
        t_half, sf = _half_period_crossing(s0, mu, t_half)
        phi = sf[6:].reshape(6, 6)
        err = np.array([sf[3], sf[5]])
        if np.max(np.abs(err)) < tol:
            return s0, 2.0 * t_half
        acc = eom(0.0, sf[:6], mu)
        vy = sf[4]
        m = np.array([[phi[3, 0], phi[3, 4]], [phi[5, 0], phi[5, 4]]]) - np.outer(
            [acc[3], acc[5]], [phi[1, 0], phi[1, 4]]
        ) / vy
        dx0, dvy0 = np.linalg.solve(m, -err)
        s0[0] += dx0
        s0[4] += dvy0
    raise InputError("halo orbit correction did not converge (amplitude too large or too small?)")


# ---------------------------------------------------------------- the periodic orbit
@dataclass(frozen=True, eq=False)
class HaloOrbit:
    """A corrected periodic halo orbit in normalised rotating coordinates.

    Phase 0 is the x-z plane crossing of largest out-of-plane excursion (z > 0 on
    the north branch, z < 0 on the south); the phase grows with time, one turn per
    ``period``. ``coef_cos``/``coef_sin`` (6, K) hold the Fourier series of the
    state over one period.
    """

    mu: float
    point: int
    state0: np.ndarray  # (6,) at phase 0
    period: float  # normalised time units
    coef_cos: np.ndarray
    coef_sin: np.ndarray
    richardson: RichardsonHalo

    @property
    def x_point(self) -> float:
        return self.richardson.x_point

    def state_at_phase(self, phase_rad) -> np.ndarray:
        """State(s) at phase(s) in radians, shape (6, N) (Fourier series evaluation)."""
        th = np.atleast_1d(np.asarray(phase_rad, dtype=float))
        k = np.arange(self.coef_cos.shape[1])
        arg = np.multiply.outer(th, k)  # (N, K)
        return self.coef_cos @ np.cos(arg).T + self.coef_sin @ np.sin(arg).T

    def mirrored(self) -> "HaloOrbit":
        """The same orbit reflected through the x-y plane (the other branch)."""
        flip = np.array([1, 1, -1, 1, 1, -1], dtype=float)[:, None]
        return HaloOrbit(
            self.mu, self.point, self.state0 * flip[:, 0], self.period,
            self.coef_cos * flip, self.coef_sin * flip, self.richardson,
        )


def _fourier(samples: np.ndarray):
    """Real Fourier coefficients of equally spaced samples over one period, (6, M) -> (6, K) x 2."""
    m = samples.shape[1]
    spec = np.fft.rfft(samples, axis=1) / m
    cc = 2.0 * spec.real
    ss = -2.0 * spec.imag
    cc[:, 0] /= 2.0
    if m % 2 == 0:  # Nyquist term
        cc[:, -1] /= 2.0
        ss[:, -1] = 0.0
    return cc, ss


def _excursion_richardson(rh_for, az_target, mu, point):
    """Richardson amplitude parameter whose largest |z| (at tau1 = 0 or pi) equals az_target."""
    az = az_target
    rh = rh_for(mu, point, az)
    for _ in range(20):
        st = rh.state(np.array([0.0, math.pi]))
        ext = np.max(np.abs(st[2]))
        if abs(ext - az_target) < 1e-14:
            break
        az *= az_target / ext
        rh = rh_for(mu, point, az)
    return rh


@functools.lru_cache(maxsize=32)
def halo_orbit(mu: float, point, az_norm: float, branch: str = "north", samples: int = 256) -> HaloOrbit:
    """Corrected periodic halo orbit about L1/L2 with largest out-of-plane excursion ``az_norm``.

    ``branch`` "north" puts that excursion at +z (along the primaries' orbital angular
    momentum), "south" at -z. Cached in memory per arguments, and on disk
    (:mod:`contactplan.ephemeris.halo_cache`) so later runs need no integration.
    """
    n = _point_number(point)
    if not (az_norm > 0 and math.isfinite(az_norm)):
        raise InputError("vertical amplitude must be a positive number")
    if branch not in ("north", "south"):
        raise InputError(f"branch must be north or south, not {branch!r}")
    if branch == "south":
        return halo_orbit(mu, n, az_norm, "north", samples).mirrored()
    rh = _excursion_richardson(richardson_halo, az_norm, mu, n)
    from contactplan.ephemeris import halo_cache

    cached = halo_cache.load(mu, n, az_norm, branch, samples)
    if cached is not None:
        s0, period, cc, ss = cached
        return HaloOrbit(mu, n, s0, period, cc, ss, rh)
    orbit = _corrected_north(mu, n, az_norm, samples, rh)
    halo_cache.store(mu, n, az_norm, branch, samples, orbit.state0, orbit.period, orbit.coef_cos, orbit.coef_sin)
    return orbit


def _corrected_north(mu: float, n: int, az_norm: float, samples: int, rh: RichardsonHalo) -> HaloOrbit:
    """The north-branch orbit by differential correction and a Fourier fit (integrates: needs scipy)."""
    # Start at the crossing with the larger |z| and put it on the north side.
    cand = rh.state(np.array([0.0, math.pi]))
    j = int(np.argmax(np.abs(cand[2])))
    guess = cand[:, j].copy()
    if guess[2] < 0:
        guess[[2, 5]] *= -1.0
    guess[2] = az_norm
    s0, period = correct_halo(mu, guess, rh.period / 2.0)
    samples_ = _symmetric_samples(s0, period, mu, samples)
    if np.max(samples_[2]) > az_norm * (1 + 1e-9) or np.min(samples_[2]) < -az_norm:
        raise InputError("halo orbit correction left the family (no largest excursion at the start)")
    cc, ss = _fourier(samples_)
    # The orbit is symmetric about the x-z plane: x, z, vy are even in phase, y, vx, vz odd.
    cc[[1, 3, 5]] = 0.0
    ss[[0, 2, 4]] = 0.0
    # Keep the harmonics above the noise floor (the series converges geometrically).
    amp = np.max(np.abs(cc) + np.abs(ss), axis=0)
    keep = max(8, int(np.nonzero(amp > 1e-14)[0][-1]) + 1)
    return HaloOrbit(mu, n, s0, period, cc[:, :keep].copy(), ss[:, :keep].copy(), rh)


def _states_at(s0, t_eval, mu) -> np.ndarray:
    """States (6, N) at the increasing instants ``t_eval`` (t_eval[0] = 0) from ``s0``, numpy integrator."""
    from contactplan.ephemeris.integrate import integrate

    out = np.empty((6, len(t_eval)))
    y = np.asarray(s0, dtype=float)[:6].copy()
    out[:, 0] = y
    f = lambda t, y_: eom(t, y_, mu)  # noqa: E731
    for j in range(1, len(t_eval)):
        y = integrate(f, t_eval[j - 1], y, t_eval[j], RTOL, ATOL)
        if not np.all(np.isfinite(y)):
            raise InputError("halo orbit integration failed")
        out[:, j] = y
    return out


def _symmetric_samples(s0, period, mu, samples):
    """States at phases 2*pi*j/samples, j = 0..samples-1: half a period integrated, the rest mirrored.

    Uses the problem's symmetry (x, y, z, vx, vy, vz, t) -> (x, -y, z, -vx, vy, -vz, -t),
    so the samples close exactly on themselves after one period.
    """
    if samples % 2:
        raise ValueError("samples must be even")
    m2 = samples // 2
    t_eval = np.arange(m2 + 1) * (period / samples)
    t_eval[-1] = period / 2.0
    first = _states_at(s0, t_eval, mu)
    sign = np.array([1.0, -1.0, 1.0, -1.0, 1.0, -1.0])[:, None]
    second = first[:, m2 - 1:0:-1] * sign  # phases pi + ... back to just before 2*pi
    return np.concatenate([first, second], axis=1)
