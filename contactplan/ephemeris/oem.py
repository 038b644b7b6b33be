"""Ephemeris from a parsed CCSDS OEM: geocentric ICRF states by interpolation.

At construction every segment's states are turned geocentric and ICRF at the
nodes: EME2000 vectors are rotated by the IAU 2006 frame bias, and the centre
(Earth-Moon barycentre, Moon, Sun, solar-system barycentre) is moved to the
Earth with the packaged DE421 (:mod:`contactplan.ephemeris.bodies`). Queries
then interpolate as each segment's header says (Lagrange, Hermite or linear,
``degree + 1`` nodes in a sliding window; see :mod:`contactplan.ephemeris.interp`).

Where segments overlap, the later segment in the file is used over its useable
span (at a boundary instant, the piece that starts there); spans no segment
covers are listed in ``gaps`` and refused.
"""

from __future__ import annotations

import functools
import math
import warnings
from pathlib import Path

import numpy as np

from contactplan.ephemeris.base import Ephemeris
from contactplan.ephemeris.interp import interpolate, uniform_step
from contactplan.errors import InputError, OutOfSpanError

_ARCSEC = math.pi / (180.0 * 3600.0)


def _rx(a):
    c, s = math.cos(a), math.sin(a)
    return np.array([[1.0, 0.0, 0.0], [0.0, c, s], [0.0, -s, c]])


def _rz(a):
    c, s = math.cos(a), math.sin(a)
    return np.array([[c, s, 0.0], [-s, c, 0.0], [0.0, 0.0, 1.0]])


@functools.lru_cache(maxsize=1)
def frame_bias_matrix() -> np.ndarray:
    """IAU 2006 frame bias B: v_mean_J2000 = B @ v_ICRS (so v_ICRS = B.T @ v_EME2000).

    Built from the Fukushima-Williams angles of the IAU 2006 precession at
    J2000.0 (IERS Conventions 2010, chapter 5: constant terms of the angle
    polynomials; values from memory): gamma_bar = -0.052928",
    phi_bar = 84381.412819", psi_bar = -0.041775", epsilon_A = 84381.406".
    B = R1(-eps) R3(-psi) R1(phi) R3(gamma). Checked against ERFA ``bp06`` in
    tests/test_oem.py.
    """
    gamb = -0.052928 * _ARCSEC
    phib = 84381.412819 * _ARCSEC
    psib = -0.041775 * _ARCSEC
    eps0 = 84381.406 * _ARCSEC
    return _rx(-eps0) @ _rz(-psib) @ _rx(phib) @ _rz(gamb)


def _center_state_km(center: str, t_tt: np.ndarray):
    """Geocentric ICRF position (km) and velocity (km/s) of an OEM centre."""
    from contactplan.ephemeris import bodies

    if center == "EARTH":
        z = np.zeros((len(t_tt), 3))
        return z, z
    if center == "EARTH BARYCENTER":
        return bodies.emb_km(t_tt, velocity=True)
    if center == "MOON":
        return bodies.moon_km(t_tt, velocity=True)
    if center == "SUN":
        return bodies.sun_km(t_tt, velocity=True)
    if center == "SOLAR SYSTEM BARYCENTER":
        p, v = bodies.earth_barycentric_km(t_tt, velocity=True)
        return -p, -v
    raise InputError(f"centre {center} is not supported")


class _Table:
    """One segment's nodes in geocentric ICRF."""

    def __init__(self, seg, path):
        t = seg.t_tt
        p = seg.pos_km
        v = seg.vel_km_s
        if seg.ref_frame == "EME2000":
            b = frame_bias_matrix()
            p = p @ b  # row vectors: (B.T @ r).T == r.T @ B
            v = v @ b
        if seg.center_name != "EARTH":
            try:
                cp, cv = _center_state_km(seg.center_name, t)
            except OutOfSpanError as exc:
                raise InputError(f"segment with CENTER_NAME {seg.center_name}: {exc.message}", path, seg.line) from None
            p = p + cp
            v = v + cv
        self.t = np.ascontiguousarray(t)
        self.p = np.ascontiguousarray(p)
        self.v = np.ascontiguousarray(v)
        self.method = seg.interpolation
        self.degree = min(seg.interpolation_degree, len(t) - 1)
        part = getattr(seg, "part", None)
        if part is None:  # the whole segment
            self.step = uniform_step(self.t)
            self.origin = None
            self.loaded = None
        else:  # a run of it (windowed read): windows placed on the whole table
            offset, t0, step, lo, hi = part
            self.step = step
            self.origin = None if step is None else (t0, offset)
            self.loaded = (lo, hi)

    def interpolate(self, t):
        return interpolate(self.method, self.t, self.p, self.v, t, self.degree, self.step, self.origin)


class OemWarning(UserWarning):
    """Something in an OEM file was read with a compromise (degree lowered, columns ignored)."""


class OemEphemeris(Ephemeris):
    """Interpolating geocentric ICRF ephemeris over an :class:`~contactplan.io.oem.OemFile`.

    The reader's compromises (``oemfile.warnings``) are issued once each as
    :class:`OemWarning` so the CLI and the app can show them.
    """

    def __init__(self, oemfile):
        from contactplan.io.oem import coverage

        self.oem = oemfile
        path = oemfile.path
        self.path = None if path is None else str(path)
        for note in oemfile.warnings:
            warnings.warn(f"{self.path or 'OEM'}: {note}", OemWarning, stacklevel=2)
        label = Path(path).name if path is not None else "OEM"
        self.name = f"{oemfile.object_name} ({label})"
        self._tables = [_Table(s, path) for s in oemfile.segments]
        pieces, gaps = coverage(oemfile.segments)
        self._pieces = pieces
        self._piece_start = np.array([p[0] for p in pieces])
        self._piece_end = np.array([p[1] for p in pieces])
        self._piece_seg = np.array([p[2] for p in pieces], dtype=np.int64)
        self.start_tt = float(self._piece_start[0])
        self.end_tt = float(self._piece_end.max())
        self.gaps = list(gaps)

    @classmethod
    def from_path(cls, path) -> "OemEphemeris":
        from contactplan.io.oem import read_oem

        return cls(read_oem(path))

    @property
    def segments(self):
        return self.oem.segments

    def _segment_of(self, t):
        if len(self._pieces) == 1:
            return np.full(t.size, self._piece_seg[0], dtype=np.int64)
        piece = np.clip(np.searchsorted(self._piece_start, t, side="right") - 1, 0, len(self._pieces) - 1)
        return self._piece_seg[piece]

    def _read_whole(self) -> None:
        """Replace the windowed tables by the whole file's (a query outside the loaded runs)."""
        from contactplan.io.oem import read_oem

        whole = read_oem(self.path)
        self.oem = whole
        self._tables = [_Table(s, whole.path) for s in whole.segments]

    def _state(self, t_tt: np.ndarray):
        t = t_tt
        seg_of = self._segment_of(t)
        segs = np.flatnonzero(np.bincount(seg_of, minlength=len(self._tables)))  # np.unique would import numpy.ma
        for s in segs:
            loaded = self._tables[int(s)].loaded
            if loaded is not None:
                ts = t if segs.size == 1 else t[seg_of == s]
                if ts.size and (ts.min() < loaded[0] or ts.max() > loaded[1]):
                    self._read_whole()
                    break
        if segs.size <= 1:
            return self._tables[int(segs[0]) if segs.size else int(self._piece_seg[0])].interpolate(t)
        pos = np.empty((t.size, 3))
        vel = np.empty((t.size, 3))
        for s in segs:
            idx = np.flatnonzero(seg_of == s)
            pos[idx], vel[idx] = self._tables[int(s)].interpolate(t[idx])
        return pos, vel
