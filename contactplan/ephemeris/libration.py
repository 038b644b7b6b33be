"""Built-in libration-point orbit: a periodic halo of the Sun-(Earth+Moon) CR3BP realised in ICRF.

This is a **planning approximation, not a flight ephemeris**. It serves for
planning before flight dynamics delivers an orbit file, and for the demo; its
positions can be off from a real trajectory by tens of thousands of km (the
real orbit is not periodic, the Earth's orbit is eccentric, the Moon and
planets perturb, station-keeping burns change it).

How it is built
    1. The circular restricted three-body problem of the Sun and the Earth-Moon
       barycentre (EMB), mass ratio from the packaged DE421 GM values
       (:mod:`contactplan.ephemeris.cr3bp`): a halo orbit about L1 or L2 from
       Richardson's third-order approximation, made periodic by differential
       correction. Its largest out-of-plane excursion equals the scenario's
       ``vertical_amplitude_km`` (converted with 1 au as length unit); ``branch``
       north puts it on the side of the Earth's orbital angular momentum.
    2. A rotating-pulsating frame built at each instant from the real Sun and
       EMB of DE421: x from the Sun toward the EMB, z along the EMB's orbital
       angular momentum about the Sun, y completing the right-handed set, length
       unit the instantaneous Sun-EMB distance, origin the Sun-EMB barycentre.
    3. Phase along the orbit = ``phase_deg`` + 360 deg * (t - epoch) / period,
       the period converted to seconds with the Sun-EMB mean motion. Phase 0 is
       the point of largest out-of-plane excursion.
    4. The geocentric ICRF state (km, km/s; the frame's rotation and pulsation
       included in the velocity) is computed every hour over the span and
       interpolated between with cubic Hermite polynomials (position and
       velocity at both ends), which reproduces the exact construction to far
       below a metre. Those hourly states are kept in the user cache for the
       same orbit and span (:meth:`HaloEphemeris._node_states`), so a later
       process on the same scenario window reads them back instead of reading
       DE421 again.
"""

from __future__ import annotations

import math

import numpy as np

from contactplan.ephemeris.base import Ephemeris
from contactplan.errors import InputError

#: spacing of the exactly computed states that are interpolated between, s
NODE_STEP_S = 3600.0
#: half-step of the central difference giving the EMB's heliocentric acceleration, s
_ACC_STEP_S = 600.0
#: bump when the exact construction (:meth:`HaloEphemeris.exact_state`) changes: cached nodes then go stale
NODE_CACHE_FORMAT = 1
#: node tables kept in the user cache (one per orbit and span; the oldest are removed)
NODE_CACHE_FILES = 12
_NODE_FILE_PREFIX = "halo-nodes-"


def _prune_node_files(folder) -> None:
    """Keep the newest :data:`NODE_CACHE_FILES` node tables in ``folder`` (quietly)."""
    try:
        files = sorted(folder.glob(f"{_NODE_FILE_PREFIX}*.bin"), key=lambda p: p.stat().st_mtime_ns)
        for old in files[:-NODE_CACHE_FILES]:
            old.unlink()
    except OSError:
        pass


def _cross(a, b):
    """Row-wise cross product of (N, 3) arrays (faster than np.cross for small widths)."""
    return np.stack(
        [
            a[:, 1] * b[:, 2] - a[:, 2] * b[:, 1],
            a[:, 2] * b[:, 0] - a[:, 0] * b[:, 2],
            a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0],
        ],
        axis=1,
    )


def _dot(a, b):
    return np.einsum("ij,ij->i", a, b)


def sun_emb_frame(t_tt):
    """Rotating-pulsating Sun-EMB frame at TT instants ``t_tt`` (s since J2000), from DE421.

    Returns a dict of (N, 3) / (N,) arrays, ICRF axes:
    ``ex, ey, ez`` unit axes and their time derivatives ``dex, dey, dez`` (1/s),
    ``dist_km`` the Sun-EMB distance and ``ddist_km_s`` its rate,
    ``emb_km, emb_km_s`` the geocentric EMB position and velocity.
    """
    from contactplan.ephemeris.bodies import emb_km, sun_from_emb_km

    t = np.atleast_1d(np.asarray(t_tt, dtype=float))
    s_pos, s_vel = sun_from_emb_km(t, velocity=True)
    r = -s_pos  # EMB relative to the Sun
    v = -s_vel
    _, v_plus = sun_from_emb_km(t + _ACC_STEP_S, velocity=True)
    _, v_minus = sun_from_emb_km(t - _ACC_STEP_S, velocity=True)
    acc = -(v_plus - v_minus) / (2.0 * _ACC_STEP_S)
    dist = np.sqrt(_dot(r, r))
    ex = r / dist[:, None]
    h = _cross(r, v)
    hn = np.sqrt(_dot(h, h))
    ez = h / hn[:, None]
    ey = _cross(ez, ex)
    ddist = _dot(ex, v)
    dex = (v - ddist[:, None] * ex) / dist[:, None]
    hdot = _cross(r, acc)
    dez = (hdot - _dot(ez, hdot)[:, None] * ez) / hn[:, None]
    dey = _cross(dez, ex) + _cross(ez, dex)
    e_pos, e_vel = emb_km(t, velocity=True)
    return {
        "ex": ex, "ey": ey, "ez": ez, "dex": dex, "dey": dey, "dez": dez,
        "dist_km": dist, "ddist_km_s": ddist, "emb_km": e_pos, "emb_km_s": e_vel,
    }


class HaloEphemeris(Ephemeris):
    """Geocentric ICRF states on a built-in periodic halo orbit (planning approximation, not a flight ephemeris).

    Covers exactly [start_tt, end_tt]; asking outside raises OutOfSpanError.
    Attributes: ``orbit`` (:class:`~contactplan.ephemeris.cr3bp.HaloOrbit`),
    ``period_s``, ``epoch_tt``, ``phase0_deg``, ``point`` ("L1"/"L2"),
    ``vertical_amplitude_km``, ``branch``, ``time_unit_s`` (1/n of the Sun-EMB problem).
    """

    def __init__(self, orbit, *, point: str, vertical_amplitude_km: float, branch: str,
                 epoch_tt: float, phase_deg: float, start_tt: float, end_tt: float,
                 time_unit_s: float, step_s: float = NODE_STEP_S):
        if not (math.isfinite(start_tt) and math.isfinite(end_tt)):
            raise InputError("built-in orbit span must be finite")
        if end_tt < start_tt:
            raise InputError("built-in orbit span ends before it starts")
        self.orbit = orbit
        self.point = point
        self.vertical_amplitude_km = float(vertical_amplitude_km)
        self.branch = branch
        self.epoch_tt = float(epoch_tt)
        self.phase0_deg = float(phase_deg)
        self.time_unit_s = float(time_unit_s)
        self.period_s = orbit.period * self.time_unit_s
        self.start_tt = float(start_tt)
        self.end_tt = float(end_tt)
        self.gaps = []
        self.name = f"built-in halo {point} (Az {self.vertical_amplitude_km:.0f} km, {branch})"
        span = self.end_tt - self.start_tt
        n = max(2, int(math.ceil(span / step_s)) + 1)
        self._t0 = self.start_tt
        self._h = span / (n - 1)
        if self._h > 0:
            nodes = self.start_tt + self._h * np.arange(n)
            nodes[-1] = self.end_tt
            self._pos, self._vel = self._node_states(nodes)
            self._n = n
            # Cubic Hermite per interval in the local variable s in [0, 1] (common practice,
            # no source): p(s) = c0 + c1 s + c2 s^2 + c3 s^3 with p, dp/ds matching the
            # node positions and velocities*h at both ends. Stored (n-1, 4, 3).
            p0, p1 = self._pos[:-1], self._pos[1:]
            m0, m1 = self._vel[:-1] * self._h, self._vel[1:] * self._h
            self._coef = np.stack(
                [p0, m0, 3 * (p1 - p0) - 2 * m0 - m1, 2 * (p0 - p1) + m0 + m1], axis=1
            )

    @classmethod
    def from_spec(cls, spec, start_tt: float, end_tt: float) -> "HaloEphemeris":
        """Build from a scenario :class:`~contactplan.scenario.model.LibrationSpec` covering [start_tt, end_tt]."""
        from contactplan.ephemeris import cr3bp

        if str(spec.system).lower() != "sun-earth":
            raise InputError(f"built-in orbits exist for the sun-earth system only, not {spec.system!r}")
        point = str(spec.point).upper()
        if point not in ("L1", "L2"):
            raise InputError(f"libration point must be L1 or L2, not {spec.point!r}")
        az_km = float(spec.vertical_amplitude_km)
        if not (math.isfinite(az_km) and az_km > 0):
            raise InputError("vertical_amplitude_km must be a positive number")
        mu = cr3bp.mass_ratio_sun_emb()
        length_km, time_s = cr3bp.sun_emb_units()
        orbit = cr3bp.halo_orbit(mu, int(point[1]), az_km / length_km, spec.branch)
        return cls(
            orbit, point=point, vertical_amplitude_km=az_km, branch=spec.branch,
            epoch_tt=spec.epoch_tt, phase_deg=spec.phase_deg,
            start_tt=start_tt, end_tt=end_tt, time_unit_s=time_s,
        )

    # ------------------------------------------------------------ phase and rotating state
    def phase_rad(self, t_tt) -> np.ndarray:
        """Phase along the periodic orbit (radians, not wrapped) at TT instants."""
        t = np.asarray(t_tt, dtype=float)
        return math.radians(self.phase0_deg) + 2.0 * math.pi * (t - self.epoch_tt) / self.period_s

    def rotating_state(self, t_tt) -> np.ndarray:
        """Normalised barycentric rotating state (6, N) at TT instants (CR3BP units)."""
        return self.orbit.state_at_phase(self.phase_rad(np.atleast_1d(t_tt)))

    def point_km(self, t_tt) -> np.ndarray:
        """Geocentric ICRF position (km, (N, 3)) of the libration point itself in the pulsating frame."""
        from contactplan.ephemeris.bodies import emb_km, sun_from_emb_km

        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        r = -sun_from_emb_km(t)[0]  # EMB from the Sun; |r| is the frame's length unit
        offset = self.orbit.x_point - (1.0 - self.orbit.mu)
        return emb_km(t)[0] + offset * r

    # ------------------------------------------------------------ exact construction
    def exact_state(self, t_tt) -> tuple[np.ndarray, np.ndarray]:
        """Geocentric ICRF position (km) and velocity (km/s), (N, 3), without interpolation (slower)."""
        t = np.atleast_1d(np.asarray(t_tt, dtype=float))
        f = sun_emb_frame(t)
        st = self.rotating_state(t)
        mu = self.orbit.mu
        q = np.stack([st[0] - (1.0 - mu), st[1], st[2]], axis=1)  # relative to the EMB, (N, 3)
        qd = st[3:6].T / self.time_unit_s  # d q / dt, 1/s
        ex, ey, ez = f["ex"], f["ey"], f["ez"]
        dist = f["dist_km"][:, None]
        in_frame = q[:, 0:1] * ex + q[:, 1:2] * ey + q[:, 2:3] * ez
        pos = f["emb_km"] + dist * in_frame
        vel = (
            f["emb_km_s"]
            + f["ddist_km_s"][:, None] * in_frame
            + dist * (q[:, 0:1] * f["dex"] + q[:, 1:2] * f["dey"] + q[:, 2:3] * f["dez"])
            + dist * (qd[:, 0:1] * ex + qd[:, 1:2] * ey + qd[:, 2:3] * ez)
        )
        return pos, vel

    def _node_key(self, nodes) -> dict | None:
        """What the node states depend on, for the user cache (None: do not cache)."""
        import hashlib

        from contactplan.ephemeris.bodies import kernel_key

        de421 = kernel_key()
        if de421 is None:
            return None
        o = self.orbit
        h = hashlib.sha256()
        for a in (o.state0, o.coef_cos, o.coef_sin, [o.mu, o.period]):
            h.update(np.ascontiguousarray(a, dtype="<f8").tobytes())
        h.update(np.asarray(o.coef_cos.shape, dtype="<i8").tobytes())
        return {"halo_nodes": NODE_CACHE_FORMAT, "orbit": h.hexdigest(), "epoch_tt": self.epoch_tt,
                "phase_deg": self.phase0_deg, "time_unit_s": self.time_unit_s, "start_tt": self.start_tt,
                "end_tt": self.end_tt, "nodes": int(nodes.size), "first": float(nodes[0]),
                "last": float(nodes[-1]), "de421": de421}

    def _node_states(self, nodes) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`exact_state` at the interpolation nodes, kept per user for the same orbit and span.

        The exact construction reads DE421 five times per node (some 60 ms for a year). Its result
        is stored in the user cache (:mod:`contactplan.cachefile`) under a key naming everything it
        depends on (the orbit's numbers, epoch, phase, span, node count, the DE421 file and
        :data:`NODE_CACHE_FORMAT`), so a later process with the same scenario window reads the very
        same numbers back. The last :data:`NODE_CACHE_FILES` spans are kept."""
        import hashlib
        import json
        import os

        from contactplan import cachefile

        try:
            key = self._node_key(nodes)
        except (TypeError, ValueError, AttributeError):
            key = None
        path = None
        if key is not None:
            digest = hashlib.sha256(json.dumps(key, sort_keys=True).encode()).hexdigest()[:20]
            path = cachefile.path_for("orbits", f"{_NODE_FILE_PREFIX}{digest}.bin")
            table = cachefile.load(path, key)
            if table is not None and table.shape == (nodes.size, 6) and np.all(np.isfinite(table)):
                try:
                    os.utime(path)  # the newest used is the last pruned
                except OSError:
                    pass
                return table[:, :3].copy(), table[:, 3:].copy()
        pos, vel = self.exact_state(nodes)
        if path is not None and cachefile.store(path, key, np.concatenate([pos, vel], axis=1)):
            _prune_node_files(path.parent)
        return pos, vel

    # ------------------------------------------------------------ interpolated (fast) path
    def _state(self, t_tt: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        if not self._h > 0:
            return self.exact_state(t_tt)
        u = (t_tt - self._t0) * (1.0 / self._h)
        i = np.clip(u.astype(np.intp), 0, self._n - 2)  # u >= 0 inside the span
        s = (u - i)[:, None]
        c = self._coef[i]  # (N, 4, 3)
        c1, c2, c3 = c[:, 1], c[:, 2], c[:, 3]
        pos = ((c3 * s + c2) * s + c1) * s + c[:, 0]
        vel = ((3.0 * c3 * s + 2.0 * c2) * s + c1) * (1.0 / self._h)
        return pos, vel
