"""The vertical alignment (profile): grades, vertical curves, design elevations.

A profile is a list of PVIs (points of vertical intersection) joined by
straight grades.  At an interior PVI a vertical curve may round the change
of grade:

* a symmetric parabola, half its length on each side of the PVI;
* an unsymmetrical parabola: ``l1`` before and ``l2`` after the PVI, two
  parabolas meeting at the PVI's station on a common tangent, the curve
  passing ``e = (g2 - g1) l1 l2 / (2 (l1 + l2))`` above the PVI there
  (negative: below);
* a circular curve of radius ``R`` tangent to both grades.

Conventions used throughout: positions along the profile are internal
stations, true distances along the alignment in job units (the caller turns
station text and station equations into these); elevations and lengths are
in job units; curve lengths are horizontal (measured along the stationing);
grades are fractions (rise over horizontal run, 0.0175 for 1.75 %), positive
uphill in the direction of increasing station.

Evaluation works on whole numpy arrays: one ``searchsorted`` into a table of
pieces (tangents, half-parabolas, circular arcs) and a closed form per kind.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import JobFileError

__all__ = [
    "PVISpec",
    "PVIRow",
    "Profile",
    "build_profile",
    "PROFILE_FEATURE_ORDER",
    "PROFILE_TOLERANCE",
]

#: Order in which coinciding profile features are listed (outputs contract).
PROFILE_FEATURE_ORDER = ("PVC", "PVI", "PVT", "HP", "LP")

#: Stations closer than this (job units) are the same station: feature points
#: merge, curves may touch or overlap by this much, and a stake this far past
#: either end of the profile still counts as on it.
PROFILE_TOLERANCE = 1e-6

_KIND_LINE, _KIND_PARABOLA, _KIND_CIRCLE = 0, 1, 2


@dataclass(frozen=True)
class PVISpec:
    """One PVI as the job file gives it.

    Parameters
    ----------
    station : float
        Internal station of the PVI, job units.
    elevation : float
        Elevation of the PVI (the intersection of the grades), job units.
    curve_length_back, curve_length_ahead : float
        Horizontal length of a parabolic vertical curve before and after the
        PVI, job units.  Both 0: no curve.  Equal: a symmetric curve of
        length ``2 * back``.  Different: an unsymmetrical curve.
    radius : float or None
        Radius of a circular vertical curve, job units (the lengths stay 0).
        Between equal grades such an arc has no length: the PVI then has
        no curve.
    where : str
        The job-file key of this PVI, e.g. ``profile.pvi[2]``, named in errors.
    """

    station: float
    elevation: float
    curve_length_back: float = 0.0
    curve_length_ahead: float = 0.0
    radius: float | None = None
    where: str = ""
    symmetric: bool = False  # given as one `curve_length` (named so in errors)


def _named(p: PVISpec, side: str) -> str:
    """``key = value`` of the job-file key that sets a curve's ``side`` ("back" or "ahead")."""
    if p.radius is not None:
        return f"radius = {float(p.radius)!r}"
    if p.symmetric:
        return f"curve_length = {float(p.curve_length_back) + float(p.curve_length_ahead)!r}"
    return f"curve_length_{side} = {float(getattr(p, 'curve_length_' + side))!r}"


@dataclass(frozen=True)
class PVIRow:
    """What a profile table shows of one PVI.

    Stations are internal stations and lengths horizontal, in job units;
    grades are fractions, positive uphill with increasing station.

    Attributes
    ----------
    station, elevation : float
        The PVI.
    grade_in, grade_out : float or None
        Grade arriving at and leaving the PVI (None at the profile's start
        and end respectively).
    curve_length_back, curve_length_ahead : float or None
        Horizontal extent of the vertical curve before and after the PVI
        (for a circular curve ``t cos(atan g1)`` and ``t cos(atan g2)``);
        None where the PVI has no curve.
    pvc_station, pvc_elevation, pvt_station, pvt_elevation : float or None
        Start and end of the vertical curve; None where there is none.
    k_value : float or None
        Total horizontal curve length over ``|g2 - g1|`` in percent; None
        without a curve or without a change of grade.
    high_low_station, high_low_elevation : float or None
        Where the grade passes through zero on the curve (g1 and g2 of
        opposite signs); None otherwise.
    high_low_kind : str or None
        ``"HP"`` (crest: g1 > 0 > g2) or ``"LP"`` (sag); None as above.
    radius : float or None
        Radius of a circular vertical curve; None for a parabola or no curve.
    where : str
        The PVI's job-file key.
    """

    station: float
    elevation: float
    grade_in: float | None
    grade_out: float | None
    curve_length_back: float | None
    curve_length_ahead: float | None
    pvc_station: float | None
    pvc_elevation: float | None
    pvt_station: float | None
    pvt_elevation: float | None
    k_value: float | None
    high_low_station: float | None
    high_low_elevation: float | None
    high_low_kind: str | None
    radius: float | None = None
    where: str = ""


@dataclass(frozen=True)
class Profile:
    """A built profile, ready to evaluate; make one with :func:`build_profile`.

    Attributes
    ----------
    name : str
        The profile's name (may be empty).
    pvis : tuple of PVISpec
        The PVIs as given.
    """

    name: str
    pvis: tuple[PVISpec, ...]
    _rows: tuple[PVIRow, ...] = field(repr=False, compare=False)
    _arrays: dict[str, NDArray[np.float64]] = field(repr=False, compare=False)

    # ---- basic facts ------------------------------------------------------------
    @property
    def start(self) -> float:
        """Internal station of the first PVI, where the profile starts."""
        return float(self.pvis[0].station)

    @property
    def end(self) -> float:
        """Internal station of the last PVI, where the profile ends."""
        return float(self.pvis[-1].station)

    def rows(self) -> tuple[PVIRow, ...]:
        """One :class:`PVIRow` per PVI, in station order."""
        return self._rows

    def covers(self, x: ArrayLike) -> NDArray[np.bool_]:
        """Whether each station lies on the profile.

        Parameters
        ----------
        x : array of float
            Internal stations, job units.

        Returns
        -------
        array of bool
            True where ``start - tol <= x <= end + tol`` (``tol`` =
            :data:`PROFILE_TOLERANCE`); False for NaN.
        """
        s = np.asarray(x, dtype=float)
        return (s >= self.start - PROFILE_TOLERANCE) & (s <= self.end + PROFILE_TOLERANCE)

    # ---- evaluation ---------------------------------------------------------------
    def elevation(self, x: ArrayLike) -> NDArray[np.float64]:
        """Design elevation of the profile at stations.

        Parameters
        ----------
        x : array of float
            Internal stations, job units, within the profile.

        Returns
        -------
        array of float
            Elevations in job units, shaped like ``x``.

        Raises
        ------
        JobFileError
            Naming the first station that lies beyond the profile.
        """
        return self._evaluate(x)[0]

    def grade(self, x: ArrayLike) -> NDArray[np.float64]:
        """Grade of the profile at stations.

        Parameters
        ----------
        x : array of float
            Internal stations, job units, within the profile.

        Returns
        -------
        array of float
            Grades as fractions, positive uphill with increasing station,
            shaped like ``x``.  At a PVI without a curve (a grade break) the
            grade ahead is given, and at the profile's end the grade back.

        Raises
        ------
        JobFileError
            Naming the first station that lies beyond the profile.
        """
        return self._evaluate(x)[1]

    def feature_points(self) -> tuple[NDArray[np.float64], tuple[str, ...]]:
        """The profile's points to stake, for ``staking.profile_points``.

        Returns
        -------
        stations : array of float
            Internal stations, job units, increasing: every interior PVI,
            each vertical curve's PVC and PVT, and each high or low point.
        features : tuple of str
            The feature(s) at each station.  Points within
            :data:`PROFILE_TOLERANCE` of each other are one point whose
            features are listed space-separated in the order PVC, PVI, PVT,
            HP, LP; it takes the PVI's station when a PVI is among them,
            else that of its first feature.
        """
        rank = {f: i for i, f in enumerate(PROFILE_FEATURE_ORDER)}
        items: list[tuple[float, int]] = []
        for r in self._rows[1:-1]:
            items.append((r.station, rank["PVI"]))
            if r.pvc_station is not None and r.pvt_station is not None:
                items.append((r.pvc_station, rank["PVC"]))
                items.append((r.pvt_station, rank["PVT"]))
            if r.high_low_station is not None and r.high_low_kind is not None:
                items.append((r.high_low_station, rank[r.high_low_kind]))
        items.sort()
        groups: list[list[tuple[float, int]]] = []
        for st, rk in items:
            if groups and st - groups[-1][-1][0] <= PROFILE_TOLERANCE:
                groups[-1].append((st, rk))
            else:
                groups.append([(st, rk)])
        stations = np.empty(len(groups))
        features: list[str] = []
        pvi = rank["PVI"]
        for k, g in enumerate(groups):
            ranks = sorted({rk for _, rk in g})
            chosen = pvi if pvi in ranks else ranks[0]
            stations[k] = next(st for st, rk in g if rk == chosen)
            features.append(" ".join(PROFILE_FEATURE_ORDER[rk] for rk in ranks))
        return stations, tuple(features)

    # ---- internals ----------------------------------------------------------------
    def _evaluate(self, x: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Elevation and grade at stations (one pass over the piece table)."""
        s = np.asarray(x, dtype=float)
        inside = self.covers(s)
        if not np.all(inside):
            bad = float(s[~inside].flat[0])
            label = f"profile {self.name!r}" if self.name else "the profile"
            raise JobFileError(
                f"a stake's station {bad:.4f} lies beyond {label} "
                f"({self.start:.4f} to {self.end:.4f})"
            )
        a = self._arrays
        x0 = a["x0"]
        flat = s.reshape(-1)  # 1-d inside, so a scalar takes the same path
        idx = np.clip(np.searchsorted(x0, flat, side="right") - 1, 0, x0.size - 1)
        dx = flat - x0[idx]
        # tangents and parabolas: y = y0 + g0 dx + c dx^2 (c = 0 on a tangent,
        # and on arcs, which are overwritten below)
        c = a["c"][idx]
        g0 = a["g0"][idx]
        y = a["y0"][idx] + dx * (g0 + c * dx)
        g = g0 + 2.0 * c * dx
        circ = a["kind"][idx] == _KIND_CIRCLE
        if np.any(circ):
            j = idx[circ]
            d = dx[circ]
            sgn, rad, u0, h0 = a["sgn"][j], a["radius"][j], a["u0"][j], a["h0"][j]
            # u: horizontal position from the centre; h: height of the arc
            # above (crest) or below (sag) the centre
            u = u0 + d
            h = np.sqrt(np.clip((rad - u) * (rad + u), 0.0, None))
            # y - y_pvc = sgn (h - h0) = sgn (u0^2 - u^2) / (h + h0), free of cancellation
            y[circ] = a["y0"][j] - sgn * d * (2.0 * u0 + d) / (h + h0)
            g[circ] = -sgn * u / h
        return y.reshape(s.shape), g.reshape(s.shape)


# ---- building ------------------------------------------------------------------------


@dataclass(frozen=True)
class _Curve:
    """A vertical curve's geometry at one PVI (internal)."""

    kind: int
    back: float  # horizontal extent before the PVI
    ahead: float  # horizontal extent after the PVI
    pvc: tuple[float, float]
    pvt: tuple[float, float]
    pieces: tuple[dict[str, float], ...]
    high_low: tuple[float, float] | None
    attr: str  # the job-file attribute that sets its size, for messages
    value: float


def _key(p: PVISpec, i: int) -> str:
    return p.where or f"profile.pvi[{i}]"


def _fmt(v: float) -> str:
    return f"{v:.4f}"


def build_profile(pvis: Sequence[PVISpec], name: str = "") -> Profile:
    """Validate PVIs and build a :class:`Profile`.

    Parameters
    ----------
    pvis : sequence of PVISpec
        The PVIs in station order; the first and last are where the profile
        starts and ends and carry no curve.  Stations and lengths in job
        units (internal stations).
    name : str
        The profile's name, for messages and outputs.

    Returns
    -------
    Profile

    Raises
    ------
    JobFileError
        Naming the PVI's key, for: fewer than two PVIs; a value that is not
        a finite number; stations not strictly increasing; a curve on the
        first or last PVI; a negative curve length, or one of the two
        lengths zero and the other not; a radius that is not positive, or
        given together with curve lengths; curves overlapping each other or
        reaching past a neighbouring PVI or the profile's ends.
    """
    specs = tuple(pvis)
    base = "profile.pvi"
    if specs and specs[0].where:
        base = re.sub(r"\[\d+\]$", "", specs[0].where)
    if len(specs) < 2:
        raise JobFileError(
            f"{base}: {len(specs)} PVI given; a profile needs at least two (where it starts and ends)"
        )
    keys = [_key(p, i) for i, p in enumerate(specs)]
    for p, k in zip(specs, keys):
        _check_numbers(p, k)
    n = len(specs)
    xs = [float(p.station) for p in specs]
    ys = [float(p.elevation) for p in specs]
    for i in range(1, n):
        if not xs[i] > xs[i - 1]:
            raise JobFileError(
                f"{keys[i]}.station = {_fmt(xs[i])}: stations must increase; "
                f"{keys[i - 1]} is at {_fmt(xs[i - 1])}"
            )
    for i, (p, k) in enumerate(zip(specs, keys)):
        _check_curve_values(p, k, end=i in (0, n - 1))
    grades = [(ys[i + 1] - ys[i]) / (xs[i + 1] - xs[i]) for i in range(n - 1)]

    curves: list[_Curve | None] = [None] * n
    for i in range(1, n - 1):
        curves[i] = _curve(specs[i], grades[i - 1], grades[i])
    _check_extents(specs, keys, curves)

    pieces = _pieces(xs, ys, grades, curves)
    arrays = {key: np.array([pc[key] for pc in pieces], dtype=float) for key in
              ("x0", "y0", "g0", "c", "sgn", "radius", "u0", "h0")}
    arrays["kind"] = np.array([pc["kind"] for pc in pieces], dtype=float)
    rows = tuple(_row(specs[i], keys[i], i, grades, curves[i]) for i in range(n))
    return Profile(name, specs, rows, arrays)


def _check_numbers(p: PVISpec, k: str) -> None:
    values: list[tuple[str, object]] = [
        ("station", p.station),
        ("elevation", p.elevation),
        ("curve_length_back", p.curve_length_back),
        ("curve_length_ahead", p.curve_length_ahead),
    ]
    if p.radius is not None:
        values.append(("radius", p.radius))
    for attr, v in values:
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise JobFileError(f"{k}.{attr} = {v!r}: expected a finite number")


def _check_curve_values(p: PVISpec, k: str, *, end: bool) -> None:
    for attr in ("curve_length_back", "curve_length_ahead"):
        v = float(getattr(p, attr))
        if v < 0:
            raise JobFileError(f"{k}.{attr} = {v!r}: a curve length cannot be negative")
    back, ahead = float(p.curve_length_back), float(p.curve_length_ahead)
    if p.radius is not None:
        if p.radius <= 0:
            raise JobFileError(f"{k}.radius = {p.radius!r}: a circular vertical curve needs a positive radius")
        if back or ahead:
            raise JobFileError(
                f"{k}.radius = {p.radius!r}: give either a radius or curve lengths, not both"
            )
    elif (back == 0.0) != (ahead == 0.0):
        raise JobFileError(
            f"{k}: curve_length_back = {back!r} and curve_length_ahead = {ahead!r}: "
            "a vertical curve needs a length on both sides of its PVI"
        )
    if end and (back or ahead or p.radius is not None):
        raise JobFileError(
            f"{k}.{_named(p, 'back' if back else 'ahead')}: the first and last PVI are the profile's ends "
            "and cannot carry a vertical curve"
        )


def _curve(p: PVISpec, g1: float, g2: float) -> _Curve | None:
    """The curve at an interior PVI between grades g1 (in) and g2 (out)."""
    xv, yv = float(p.station), float(p.elevation)
    if p.radius is not None:
        rad = float(p.radius)
        a1, a2 = math.atan(g1), math.atan(g2)
        if a1 == a2:
            return None  # no change of grade: the arc has no length
        t = rad * math.tan(abs(a2 - a1) / 2.0)
        pvc = (xv - t * math.cos(a1), yv - t * math.sin(a1))
        pvt = (xv + t * math.cos(a2), yv + t * math.sin(a2))
        sgn = 1.0 if g2 < g1 else -1.0  # crest: centre below the arc
        u0 = -sgn * rad * math.sin(a1)  # PVC's horizontal position from the centre
        h0 = rad * math.cos(a1)
        arc = {"kind": _KIND_CIRCLE, "x0": pvc[0], "y0": pvc[1], "g0": 0.0, "c": 0.0,
               "sgn": sgn, "radius": rad, "u0": u0, "h0": h0}
        hl = None
        if g1 * g2 < 0:
            # zero grade above/below the centre: u = 0
            hl = (pvc[0] - u0, pvc[1] + sgn * u0 * u0 / (rad + h0))
        back, ahead = t * math.cos(a1), t * math.cos(a2)  # horizontal extents
        return _Curve(_KIND_CIRCLE, back, ahead, pvc, pvt, (arc,), hl, "radius", rad)
    l1, l2 = float(p.curve_length_back), float(p.curve_length_ahead)
    if l1 == 0.0:
        return None
    gm = (g1 * l1 + g2 * l2) / (l1 + l2)  # grade of the common tangent at the PVI
    e = (g2 - g1) * l1 * l2 / (2.0 * (l1 + l2))  # curve minus PVI elevation there
    pvc = (xv - l1, yv - g1 * l1)
    pvt = (xv + l2, yv + g2 * l2)
    blank = {"sgn": 0.0, "radius": 0.0, "u0": 0.0, "h0": 0.0}
    first = {"kind": _KIND_PARABOLA, "x0": pvc[0], "y0": pvc[1], "g0": g1,
             "c": (gm - g1) / (2.0 * l1), **blank}
    second = {"kind": _KIND_PARABOLA, "x0": xv, "y0": yv + e, "g0": gm,
              "c": (g2 - gm) / (2.0 * l2), **blank}
    hl = None
    if g1 * g2 < 0:
        # the grade runs monotonically g1 -> gm -> g2; find the half where it is zero
        pc = first if gm * g1 <= 0 else second
        u = -pc["g0"] / (2.0 * pc["c"])
        hl = (pc["x0"] + u, pc["y0"] + u * (pc["g0"] + pc["c"] * u))
    attr = "curve_length_back"
    return _Curve(_KIND_PARABOLA, l1, l2, pvc, pvt, (first, second), hl, attr, l1)


def _check_extents(specs: tuple[PVISpec, ...], keys: list[str], curves: list[_Curve | None]) -> None:
    """Curves stay between their neighbouring PVIs and do not overlap."""
    n = len(specs)
    first, last = keys[0], keys[-1]
    prev: tuple[int, _Curve] | None = None
    for i in range(1, n - 1):
        cv = curves[i]
        if cv is None:
            continue
        what = f"{keys[i]}.{_named(specs[i], 'back')}"
        x_prev, x_next = float(specs[i - 1].station), float(specs[i + 1].station)
        if cv.pvc[0] < x_prev - PROFILE_TOLERANCE:
            where = f"the profile's start at {first}" if i == 1 else f"{keys[i - 1]}"
            raise JobFileError(
                f"{what}: the vertical curve begins at {_fmt(cv.pvc[0])}, before {where} "
                f"({_fmt(x_prev)})"
            )
        if cv.pvt[0] > x_next + PROFILE_TOLERANCE:
            where = f"the profile's end at {last}" if i == n - 2 else f"{keys[i + 1]}"
            raise JobFileError(
                f"{keys[i]}.{_named(specs[i], 'ahead')}: the vertical curve ends at {_fmt(cv.pvt[0])}, past {where} "
                f"({_fmt(x_next)})"
            )
        if prev is not None and prev[0] == i - 1 and cv.pvc[0] < prev[1].pvt[0] - PROFILE_TOLERANCE:
            raise JobFileError(
                f"{what}: the vertical curve begins at {_fmt(cv.pvc[0])}, before the curve of "
                f"{keys[i - 1]} ends at {_fmt(prev[1].pvt[0])} (vertical curves may not overlap)"
            )
        prev = (i, cv)


def _pieces(xs: list[float], ys: list[float], grades: list[float],
            curves: list[_Curve | None]) -> list[dict[str, float]]:
    """The evaluation table: tangents and curve pieces in station order."""
    out: list[dict[str, float]] = []
    blank = {"sgn": 0.0, "radius": 0.0, "u0": 0.0, "h0": 0.0}
    n = len(xs)
    for i in range(n - 1):
        here, there = curves[i], curves[i + 1]
        a = here.pvt[0] if here is not None else xs[i]
        b = there.pvc[0] if there is not None else xs[i + 1]
        if b > a:  # a tangent of positive length (curves that touch leave none)
            g = grades[i]
            out.append({"kind": _KIND_LINE, "x0": a, "y0": ys[i] + g * (a - xs[i]),
                        "g0": g, "c": 0.0, **blank})
        if there is not None:
            out.extend(there.pieces)
    return out


def _row(p: PVISpec, k: str, i: int, grades: list[float], cv: _Curve | None) -> PVIRow:
    g_in = grades[i - 1] if i > 0 else None
    g_out = grades[i] if i < len(grades) else None
    if cv is None:
        return PVIRow(float(p.station), float(p.elevation), g_in, g_out,
                      None, None, None, None, None, None, None, None, None, None, None, k)
    assert g_in is not None and g_out is not None
    a_pct = abs(g_out - g_in) * 100.0
    k_value = (cv.back + cv.ahead) / a_pct if a_pct > 0 else None
    hl_st, hl_el, kind = None, None, None
    if cv.high_low is not None:
        hl_st, hl_el = cv.high_low
        kind = "HP" if g_in > 0 else "LP"
    radius = float(p.radius) if cv.kind == _KIND_CIRCLE and p.radius is not None else None
    return PVIRow(float(p.station), float(p.elevation), g_in, g_out, cv.back, cv.ahead,
                  cv.pvc[0], cv.pvc[1], cv.pvt[0], cv.pvt[1], k_value, hl_st, hl_el, kind, radius, k)
