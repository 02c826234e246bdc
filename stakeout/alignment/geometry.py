"""The built alignment: elements, key points, curves; evaluation and inverse.

Everything here works on numpy arrays.  Conventions: stations and lengths in
job units; azimuths in degrees clockwise from grid north; offsets
perpendicular to the alignment, negative left and positive right looking
up-station; ``turn`` +1 right, -1 left.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..angles import normalize_azimuth, sincosd
from ..errors import GeometryError
from .curves import ArcProperties, CompoundTangents

__all__ = ["Element", "KeyPoint", "Curve", "Alignment", "FEATURE_ORDER", "STATION_TOLERANCE"]

#: Order in which coinciding key-point features are listed (outputs contract).
FEATURE_ORDER = ("POB", "AP", "PT", "PC", "PCC", "PRC", "POE")

#: Stations closer than this (job units) are the same station.
STATION_TOLERANCE = 1e-6

_CHUNK_PAIRS = 2_000_000  # point x element pairs handled at once by the inverse


@dataclass(frozen=True)
class Element:
    """One line or arc of the alignment.

    ``radius``, ``delta`` (degrees), ``center_*`` and ``arc`` are set for
    arcs only; ``turn`` is 0 for lines.
    """

    kind: str
    start_station: float
    length: float
    start_northing: float
    start_easting: float
    start_azimuth: float
    end_northing: float
    end_easting: float
    end_azimuth: float
    turn: int = 0
    radius: float | None = None
    delta: float | None = None
    center_northing: float | None = None
    center_easting: float | None = None
    arc: ArcProperties | None = None

    @property
    def end_station(self) -> float:
        """Station at the element's end."""
        return self.start_station + self.length


@dataclass(frozen=True)
class KeyPoint:
    """A named point on the centreline: POB, PC, PCC, PRC, PT, AP, POE."""

    station: float
    northing: float
    easting: float
    features: tuple[str, ...]


@dataclass(frozen=True)
class Curve:
    """A maximal run of arcs turning the same way (a PRC starts a new one).

    ``pi_*`` and ``tangents`` are ``None`` when the total angle is 180
    degrees or more (the tangents then meet behind the curve).
    """

    number: int
    elements: tuple[int, ...]
    turn: int
    delta: float
    pc_station: float
    pt_station: float
    pi_station: float | None
    pi_northing: float | None
    pi_easting: float | None
    tangents: CompoundTangents | None


@dataclass(frozen=True)
class Alignment:
    """A horizontal alignment of lines and arcs, ready to evaluate."""

    name: str
    elements: tuple[Element, ...]
    key_points: tuple[KeyPoint, ...]
    curves: tuple[Curve, ...]
    _arrays: dict[str, NDArray[np.float64]] = field(repr=False, compare=False)

    # ---- construction ---------------------------------------------------------
    @classmethod
    def from_elements(cls, name: str, elements: list[Element], curves: tuple[Curve, ...],
                      key_points: tuple[KeyPoint, ...]) -> "Alignment":
        """Assemble an alignment and its evaluation arrays."""
        arr = {
            "start": np.array([e.start_station for e in elements]),
            "length": np.array([e.length for e in elements]),
            "n0": np.array([e.start_northing for e in elements]),
            "e0": np.array([e.start_easting for e in elements]),
            "az0": np.array([e.start_azimuth for e in elements]),
            "k": np.array([0.0 if e.radius is None else e.turn / e.radius for e in elements]),
        }
        arr["sin0"], arr["cos0"] = sincosd(arr["az0"])
        aps = [kp for kp in key_points if "AP" in kp.features]
        ap_st = np.array([kp.station for kp in aps])
        ap_back = []
        ap_ahead = []
        for kp in aps:
            i = int(np.searchsorted(arr["start"], kp.station - STATION_TOLERANCE, side="right")) - 1
            ap_back.append(elements[i].end_azimuth)
            ap_ahead.append(elements[i + 1].start_azimuth)
        arr["ap_station"] = ap_st
        arr["ap_n"] = np.array([kp.northing for kp in aps])
        arr["ap_e"] = np.array([kp.easting for kp in aps])
        arr["ap_back"] = np.array(ap_back)
        arr["ap_ahead"] = np.array(ap_ahead)
        return cls(name, tuple(elements), key_points, curves, arr)

    # ---- basic facts ------------------------------------------------------------
    @property
    def start_station(self) -> float:
        """Station of the POB."""
        return self.elements[0].start_station

    @property
    def end_station(self) -> float:
        """Station of the POE."""
        return self.elements[-1].end_station

    @property
    def length(self) -> float:
        """Total length along the centreline."""
        return self.end_station - self.start_station

    # ---- evaluation ---------------------------------------------------------------
    def evaluate(
        self, stations: ArrayLike, offsets: ArrayLike = 0.0, *, miter: bool = True
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """Coordinates and direction at stations and offsets.

        Parameters
        ----------
        stations : array of float
            Stations in job units, within the alignment.
        offsets : array of float
            Perpendicular offsets in job units, negative left, positive
            right; broadcast against ``stations``.
        miter : bool
            At an angle point, put an offset stake where the two offset
            lines meet (job-file contract) instead of square to the
            ahead tangent.

        Returns
        -------
        northing, easting, azimuth : arrays
            Grid coordinates and the tangent azimuth (degrees) there.

        Raises
        ------
        GeometryError
            If a station lies off the alignment.
        """
        a = self._arrays
        s, o = np.broadcast_arrays(np.asarray(stations, dtype=float), np.asarray(offsets, dtype=float))
        lo, hi = self.start_station, self.end_station
        bad = (s < lo - STATION_TOLERANCE) | (s > hi + STATION_TOLERANCE) | ~np.isfinite(s)
        if np.any(bad):
            raise GeometryError(
                f"station {float(s[bad].flat[0]):.4f} is off the alignment ({lo:.4f} to {hi:.4f})"
            )
        idx = np.clip(np.searchsorted(a["start"], s, side="right") - 1, 0, len(a["start"]) - 1)
        ds = s - a["start"][idx]
        k = a["k"][idx]
        half = 0.5 * k * ds  # half the turn from the element's start, radians
        sh, ch = np.sin(half), np.cos(half)
        # chord = 2 sin(half) / k, and just ds on lines (k = 0)
        chord = np.where(k == 0.0, ds, 2.0 * sh / np.where(k == 0.0, 1.0, k))
        # directions by angle addition from the element's exact start direction
        # (sincosd, exact at multiples of 90), so a line keeps it exactly
        s0, c0 = a["sin0"][idx], a["cos0"][idx]
        sm, cm = s0 * ch + c0 * sh, c0 * ch - s0 * sh  # at the chord: start + half
        s2, c2 = 2.0 * sh * ch, 1.0 - 2.0 * sh * sh  # the whole turn
        st, ct = s0 * c2 + c0 * s2, c0 * c2 - s0 * s2
        az = a["az0"][idx] + np.degrees(2.0 * half)
        north = a["n0"][idx] + chord * cm - o * st
        east = a["e0"][idx] + chord * sm + o * ct
        if miter and a["ap_station"].size:
            j = np.clip(np.searchsorted(a["ap_station"], s), 0, a["ap_station"].size - 1)
            hit = np.abs(a["ap_station"][j] - s) <= STATION_TOLERANCE
            if np.any(hit):
                jj = j[hit]
                s1, c1 = sincosd(a["ap_back"][jj])
                s2, c2 = sincosd(a["ap_ahead"][jj])
                # right normals (east, north) = (cos az, -sin az); the offset
                # lines meet at o * (n1 + n2) / (1 + n1.n2)
                denom = 1.0 + (c1 * c2 + s1 * s2)
                oh = o[hit]
                east[hit] = a["ap_e"][jj] + oh * (c1 + c2) / denom
                north[hit] = a["ap_n"][jj] - oh * (s1 + s2) / denom
        return north, east, np.asarray(normalize_azimuth(az))

    # ---- inverse ------------------------------------------------------------------
    def locate(
        self, northing: ArrayLike, easting: ArrayLike
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        """Station and offset of points against the alignment.

        Each point is referred to the element whose nearest point is
        closest.  A point square to an element gets its perpendicular
        offset; one beyond the ends of every element it is near (outside an
        angle point, past an end arc) gets the distance to the nearest end,
        signed by side.  Tangents at the very start and end are extended, so
        a point before the POB or past the POE gets a station outside the
        alignment.

        Candidate elements come from a uniform grid over the elements'
        bounding boxes; a point with no element within one grid cell is
        compared against every element, so the answer is always the
        nearest element.

        Parameters
        ----------
        northing, easting : array of float
            Grid coordinates, job units.

        Returns
        -------
        station, offset, distance : arrays
            Station and signed offset (negative left), and the distance to
            the nearest point on the alignment.
        """
        n, e = np.broadcast_arrays(np.asarray(northing, dtype=float), np.asarray(easting, dtype=float))
        shape = n.shape
        n = n.ravel()
        e = e.ravel()
        out = np.empty((3, n.size))
        todo = np.arange(n.size)
        grid = self._grid()
        if grid is not None and n.size:
            g, e_min, n_min, cells = grid
            keys = (np.floor((e - e_min) / g).astype(np.int64) << 32) + np.floor((n - n_min) / g).astype(np.int64)
            uniq, inv = np.unique(keys, return_inverse=True)
            order = np.argsort(inv, kind="stable")
            bounds = np.searchsorted(inv[order], np.arange(uniq.size + 1))
            miss = []
            for c, key in enumerate(uniq.tolist()):  # one step per occupied grid cell, vectorised inside
                pts = order[bounds[c]:bounds[c + 1]]
                sel = cells.get(key)
                if sel is None:
                    miss.append(pts)
                    continue
                res = self._locate_sel(n[pts], e[pts], sel)
                ok = res[2] <= g
                out[:, pts[ok]] = res[:, ok]
                miss.append(pts[~ok])
            todo = np.concatenate(miss) if miss else todo[:0]
        if todo.size:
            allsel = np.arange(len(self.elements))
            step = max(1, _CHUNK_PAIRS // len(self.elements))
            for i in range(0, todo.size, step):  # chunks bound memory; each chunk is vectorised
                pts = todo[i:i + step]
                out[:, pts] = self._locate_sel(n[pts], e[pts], allsel)
        return out[0].reshape(shape), out[1].reshape(shape), out[2].reshape(shape)

    def _grid(self):
        """(cell size, origin E, origin N, {cell key: element indices}), or None for short alignments."""
        cached = self._arrays.get("_grid")
        if cached is not None:
            return cached[0]
        grid = None
        k = len(self.elements)
        if k > 8:
            boxes = []
            for el in self.elements:
                steps = 2 if el.kind == "line" else max(3, int(np.ceil((el.delta or 0.0) / 10.0)) + 1)
                s = np.linspace(el.start_station, el.end_station, steps)
                pn, pe, _ = self.evaluate(s, miter=False)
                pad = 0.0 if el.radius is None else el.radius * (1.0 - np.cos(np.radians(5.0)))
                boxes.append((pe.min() - pad, pn.min() - pad, pe.max() + pad, pn.max() + pad))
            b = np.array(boxes)
            extent = max(b[:, 2].max() - b[:, 0].min(), b[:, 3].max() - b[:, 1].min(), 1e-9)
            g = max(self.length / k, extent / 4096.0, 1e-6)
            e_min, n_min = b[:, 0].min() - 2 * g, b[:, 1].min() - 2 * g
            cells: dict[int, list[int]] = {}
            for idx, (x0, y0, x1, y1) in enumerate(b):
                ix0, iy0 = int(np.floor((x0 - g - e_min) / g)), int(np.floor((y0 - g - n_min) / g))
                ix1, iy1 = int(np.floor((x1 + g - e_min) / g)), int(np.floor((y1 + g - n_min) / g))
                for ix in range(ix0, ix1 + 1):
                    for iy in range(iy0, iy1 + 1):
                        cells.setdefault((ix << 32) + iy, []).append(idx)
            grid = (g, e_min, n_min, {key: np.array(v) for key, v in cells.items()})
        self._arrays["_grid"] = (grid,)  # type: ignore[assignment]
        return grid

    def _locate_sel(self, n: NDArray[np.float64], e: NDArray[np.float64], sel: NDArray[np.int64]) -> NDArray[np.float64]:
        """Nearest of the elements ``sel`` for each point: rows station, offset, distance."""
        a = self._arrays
        nel = len(self.elements)
        k = a["k"][sel]
        length = a["length"][sel]
        az0 = a["az0"][sel]
        n0, e0 = a["n0"][sel][None, :], a["e0"][sel][None, :]
        sa, ca = a["sin0"][sel], a["cos0"][sel]  # exact start directions, computed once
        dn = n[:, None] - n0
        de = e[:, None] - e0
        is_arc = k != 0.0
        # lines: along the element's direction
        along = de * sa + dn * ca
        lo = np.where((sel == 0) & ~is_arc, -np.inf, 0.0)
        hi = np.where((sel == nel - 1) & ~is_arc, np.inf, length)
        # arcs: angle swept from the start radius, about the centre
        r = np.where(is_arc, 1.0 / np.abs(np.where(is_arc, k, 1.0)), 0.0)
        turn = np.sign(k)
        # centre = start + turn * R * right normal; right normal (E, N) = (cos, -sin)
        c_e = a["e0"][sel] + turn * r * ca
        c_n = a["n0"][sel] - turn * r * sa
        phi = np.degrees(np.arctan2(e[:, None] - c_e[None, :], n[:, None] - c_n[None, :]))
        start_radial = az0 - 90.0 * turn  # direction centre -> start
        swept_deg = np.where(is_arc, np.degrees(np.abs(k) * length), 0.0)
        u = np.mod((phi - start_radial[None, :]) * turn[None, :], 360.0)
        u = np.mod(u - swept_deg / 2.0 + 180.0, 360.0) - 180.0 + swept_deg / 2.0
        s_loc = np.where(is_arc[None, :], np.radians(u) * r, along)
        s_c = np.clip(s_loc, lo[None, :], hi[None, :])
        clamped = s_c != s_loc
        # the element's point at s_c and the distance to it
        turn_deg = np.degrees(k[None, :] * s_c)
        chord = s_c * np.sinc(k[None, :] * s_c / (2.0 * np.pi))
        sm, cm = sincosd(az0[None, :] + turn_deg / 2.0)
        qn = n0 + chord * cm
        qe = e0 + chord * sm
        dist = np.hypot(n[:, None] - qn, e[:, None] - qe)
        best = np.argmin(dist, axis=1)
        rows = np.arange(n.size)
        sb = s_c[rows, best]
        # signed offset: component on the right normal at the nearest point
        st, ct = sincosd(az0[best] + np.degrees(k[best] * sb))
        across = (e - qe[rows, best]) * ct - (n - qn[rows, best]) * st
        d = dist[rows, best]
        sign = np.where(across < 0.0, -1.0, 1.0)
        offset = np.where(clamped[rows, best], sign * d, across)
        return np.stack([a["start"][sel][best] + sb, offset, d])
