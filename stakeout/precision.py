r"""Predicted precision of a set-out stake (numpy, no I/O).

The error model (job-file contract, ``[instrument]``): all errors are
independent and normal.

=========  ==========================================  =====================
symbol     error source                                standard error
=========  ==========================================  =====================
``c_i``    instrument off the occupied mark            ``centering_sigma`` per axis
``c_b``    backsight target off the backsight mark     ``centering_sigma`` per axis
``p_b``    pointing at the backsight                   ``angle_sigma``
``p_s``    pointing (turning) to the stake direction   ``angle_sigma``
``d``      distance laid off                           ``sqrt(a**2 + (b*1e-6*D)**2)``
``c_p``    pole on the stake off the stake             ``pole_sigma`` per axis
=========  ==========================================  =====================

Derivation
----------
Vectors are ``(northing, easting)``.  For a line of length ``L`` from ``P``
to ``Q`` with grid azimuth ``a`` (degrees clockwise from grid north, here in
radians), ``u = (cos a, sin a) = (Q - P)/L`` is the unit vector along it and
``w = (-sin a, cos a)`` the unit vector square to it, turned clockwise (to
the right, towards growing azimuth).  Since ``a = atan2(dE, dN)``, moving the
ends changes the azimuth by, to first order,

    da = w . (dQ - dP) / L.                                             (1)

Write ``O`` for the occupied mark, ``B`` the backsight mark, ``S`` the design
stake, ``A_B`` and ``A_S`` the grid azimuths ``O -> B`` and ``O -> S`` from
the marks' coordinates, ``L_B = |B - O|``, ``D = |S - O|``.  The crew:

1. sets the instrument up at ``O + c_i``;
2. points at the target held at ``B + c_b``: the telescope's true direction
   is ``az(O + c_i -> B + c_b) + p_b``;
3. sets the circle to ``A_B``, so a circle reading ``r`` looks along the
   true direction ``r + az(O + c_i -> B + c_b) + p_b - A_B``;
4. turns the circle to ``A_S`` (the backsight azimuth plus the design angle
   right) with a second pointing error: the line of sight is
   ``phi = A_S + [az(O + c_i -> B + c_b) - A_B] + p_b + p_s``;
5. lays off ``D + d`` along ``phi`` from the true instrument position and
   sets the stake where the pole stands, off it by ``c_p``:

    S_set = O + c_i + (D + d) u(phi) + c_p.

By (1), ``az(O + c_i -> B + c_b) - A_B = w_B . (c_b - c_i) / L_B``, and
``u(phi) = u_S + w_S (phi - A_S)`` to first order, so, dropping products of
errors,

    S_set - S = c_i + c_p + d u_S
                + D w_S [w_B . (c_b - c_i) / L_B + p_b + p_s].          (2)

``c_i`` enters twice: it moves the stake directly and it turns the circle's
orientation (the sight to the backsight is taken from the displaced
instrument).  Both terms are kept in one Jacobian column, so their
correlation is exact.  With the error vector
``e = (c_iN, c_iE, c_bN, c_bE, p_b, p_s, d, c_pN, c_pE)`` and ``k = D/L_B``,
(2) is ``S_set - S = J e`` with the 2 x 9 Jacobian

    J = [ I - k w_S w_B^T,  k w_S w_B^T,  D w_S,  D w_S,  u_S,  I ],

the covariance of the stake is ``C = J Sigma J^T`` with ``Sigma`` diagonal
(the variances above; angles in radians), and the along / across standard
errors are ``sqrt(u_S^T C u_S)`` and ``sqrt(w_S^T C w_S)``.  Projected,

    along  = u_S . c_i + d + u_S . c_p
    across = (w_S - k w_B) . c_i + k w_B . c_b + D (p_b + p_s) + w_S . c_p,

and since ``|w_S - k w_B|^2 = 1 + k^2 - 2 k cos(theta)`` with ``theta`` the
angle at the instrument between backsight and stake, the across variance is
``D^2`` times the variance of the turned angle,

    2 s_a^2 + s_c^2 (D^2 + L_B^2 - 2 D L_B cos theta) / (D L_B)^2
            + s_c^2 / L_B^2,

plus ``s_p^2``: the textbook terms for the error of a measured angle from
pointing and reading of two directions, from instrument centring and from
target centring (C. D. Ghilani and P. R. Wolf, *Elementary Surveying*,
chapter on errors in angle measurement; from memory, check the edition).
The module computes ``J Sigma J^T`` itself; the closed form is the check.

The laid distance ``D`` is the grid distance from the marks' coordinates;
the ppm term of the ground distance differs from it by the combined factor,
a part in 10^4 of a part in 10^6, which is ignored.  A stake on the occupied
mark (``D = 0``) has no line of sight: its "along" is taken as grid north,
as :func:`stakeout.setout.compute_setout` reports azimuth 0 there.

The 95 % radius is ``2.4477 * max(sigma_along, sigma_across)`` (contract;
2.4477 = sqrt(-2 ln 0.05), the 95 % radius of a circular normal
distribution, taken with the larger sigma so it is not optimistic).
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, fields
from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import GeometryError, JobFileError

__all__ = ["InstrumentSpec", "Precision", "predict_precision", "flag_exceeding", "R95_FACTOR"]

R95_FACTOR = 2.4477  # job-file contract: r95 = 2.4477 x the larger sigma
_ARCSEC = math.pi / 648000.0  # radians per arc-second
_CHUNK = 1 << 16  # stakes per block of Jacobians (2 x 9 floats each)

# dataclass field -> the job-file key a user writes, named in errors
_KEYS = {
    "angle_sigma_arcsec": "instrument.angle_sigma",
    "distance_sigma": "instrument.distance_sigma",
    "distance_ppm": "instrument.distance_ppm",
    "centering_sigma": "instrument.centering_sigma",
    "pole_sigma": "instrument.pole_sigma",
}


@dataclass(frozen=True)
class InstrumentSpec:
    """The instrument's and crew's standard errors.

    Parameters
    ----------
    angle_sigma_arcsec : float
        Arc-seconds: one pointing and reading of one direction.
    distance_sigma : float
        Job units: constant part ``a`` of the EDM error (manufacturer's
        ``a + b ppm`` specification form, combined here in quadrature).
    distance_ppm : float
        Parts per million of the distance: the ``b`` of ``a + b ppm``.
    centering_sigma : float
        Job units per axis: centring of the instrument over the occupied
        mark, and of the backsight target over its mark.
    pole_sigma : float
        Job units per axis: the rod or pole held on the stake.

    Raises
    ------
    JobFileError
        For a negative or non-finite value, naming the ``[instrument]`` key.
    """

    angle_sigma_arcsec: float
    distance_sigma: float
    distance_ppm: float
    centering_sigma: float
    pole_sigma: float

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            ok = isinstance(value, numbers.Real) and not isinstance(value, bool)
            if not ok or not math.isfinite(value) or value < 0:
                raise JobFileError(f"{_KEYS[f.name]} = {value!r}: must be a finite number, 0 or more")


class Precision(NamedTuple):
    """Predicted standard errors of set-out stakes, in job units.

    Attributes
    ----------
    sigma_along : ndarray
        Along the line of sight from the occupied point to the stake.
    sigma_across : ndarray
        Square to the line of sight.
    r95 : ndarray
        95 % radius, ``2.4477 * max(sigma_along, sigma_across)``.
    """

    sigma_along: NDArray[np.float64]
    sigma_across: NDArray[np.float64]
    r95: NDArray[np.float64]


def _unit(dn: NDArray[np.float64], de: NDArray[np.float64], length: NDArray[np.float64]) -> tuple[
    NDArray[np.float64], NDArray[np.float64]
]:
    """``(N, E)`` stacked unit vector; grid north where the length is 0."""
    safe = np.where(length > 0, length, 1.0)
    un = np.where(length > 0, dn / safe, 1.0)
    ue = np.where(length > 0, de / safe, 0.0)
    return un, ue


def _covariance_block(
    dn_s: NDArray[np.float64],
    de_s: NDArray[np.float64],
    dn_b: NDArray[np.float64],
    de_b: NDArray[np.float64],
    spec: InstrumentSpec,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Along and across variances of one block of stakes."""
    n = dn_s.size
    d = np.hypot(dn_s, de_s)
    lb = np.hypot(dn_b, de_b)
    usn, use = _unit(dn_s, de_s, d)
    ubn, ube = _unit(dn_b, de_b, lb)
    ws = np.stack([-use, usn], axis=-1)  # (n, 2): w_S, square to the sight, clockwise
    us = np.stack([usn, use], axis=-1)  # (n, 2): u_S
    wb = np.stack([-ube, ubn], axis=-1)  # (n, 2): w_B
    k = d / lb

    # the Jacobian of eq. (2): rows N, E; columns c_iN, c_iE, c_bN, c_bE, p_b, p_s, d, c_pN, c_pE
    jac = np.zeros((n, 2, 9))
    orient = (k[:, None, None] * ws[:, :, None]) * wb[:, None, :]  # k w_S w_B^T, (n, 2, 2)
    eye = np.eye(2)
    jac[:, :, 0:2] = eye - orient  # instrument centring: position and orientation together
    jac[:, :, 2:4] = orient  # backsight-target centring: orientation only
    jac[:, :, 4] = d[:, None] * ws  # pointing at the backsight
    jac[:, :, 5] = d[:, None] * ws  # pointing to the stake
    jac[:, :, 6] = us  # distance laid off
    jac[:, :, 7:9] = eye  # pole on the stake

    # Sigma: diagonal variances, the distance one per stake
    sa = spec.angle_sigma_arcsec * _ARCSEC
    var = np.empty((n, 9))
    var[:, 0:4] = spec.centering_sigma**2
    var[:, 4:6] = sa**2
    var[:, 6] = spec.distance_sigma**2 + (spec.distance_ppm * 1e-6 * d) ** 2
    var[:, 7:9] = spec.pole_sigma**2

    # Turn J into the along/across frame first (rows u_S^T J, w_S^T J), then form
    # (R J) Sigma (R J)^T = R C R^T: terms that are square to a row vanish exactly
    # instead of cancelling in rounding.  Only the diagonal is needed.
    rot = np.stack([us, ws], axis=1)  # (n, 2, 2), rows u_S, w_S
    jac_la = np.einsum("nai,nik->nak", rot, jac)
    la = np.einsum("nak,nk,nak->na", jac_la, var, jac_la)  # diag of J Sigma J^T, along/across
    return la[:, 0], la[:, 1]


def predict_precision(
    occ_n: ArrayLike,
    occ_e: ArrayLike,
    bs_n: ArrayLike,
    bs_e: ArrayLike,
    stake_n: ArrayLike,
    stake_e: ArrayLike,
    spec: InstrumentSpec,
) -> Precision:
    """First-order standard errors of set-out stakes along and across the sight.

    Parameters
    ----------
    occ_n, occ_e : float or array
        Occupied mark, grid northing and easting (job units); a scalar for
        one setup, or one value per stake for several setups.
    bs_n, bs_e : float or array
        Backsight mark, grid northing and easting (job units); scalar or one
        per stake, as the occupied point.
    stake_n, stake_e : array
        Design stake positions, grid northing and easting (job units).
    spec : InstrumentSpec
        Standard errors of the instrument and crew.

    Returns
    -------
    Precision
        ``sigma_along``, ``sigma_across`` and ``r95`` in job units, arrays
        of the broadcast shape of the inputs.  "Along" is the direction from
        the occupied point to the stake (grid north for a stake on the
        occupied mark); "across" is square to it.

    Raises
    ------
    GeometryError
        If a backsight mark coincides with its occupied mark (no
        orientation), naming the points.
    """
    arrays = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (occ_n, occ_e, bs_n, bs_e, stake_n, stake_e))
    )
    shape = arrays[0].shape
    on, oe, bn, be, sn, se = (a.ravel() for a in arrays)
    dn_b, de_b = bn - on, be - oe
    same = (dn_b == 0) & (de_b == 0)
    if same.any():
        i = int(np.argmax(same))
        raise GeometryError(
            f"backsight N {float(bn[i])!r} E {float(be[i])!r} is the occupied point itself: no orientation"
        )
    var_a = np.empty(on.size)
    var_c = np.empty(on.size)
    for lo in range(0, on.size, _CHUNK):
        sl = slice(lo, lo + _CHUNK)
        var_a[sl], var_c[sl] = _covariance_block(sn[sl] - on[sl], se[sl] - oe[sl], dn_b[sl], de_b[sl], spec)
    sigma_along = np.sqrt(np.maximum(var_a, 0.0)).reshape(shape)
    sigma_across = np.sqrt(np.maximum(var_c, 0.0)).reshape(shape)
    r95 = np.asarray(R95_FACTOR * np.maximum(sigma_along, sigma_across))
    return Precision(sigma_along, sigma_across, r95)


def flag_exceeding(r95: ArrayLike, tolerance: float) -> NDArray[np.bool_]:
    """Which stakes' 95 % radius exceeds the horizontal tolerance.

    Parameters
    ----------
    r95 : array
        95 % radii (job units), as from :func:`predict_precision`.
    tolerance : float
        ``[check] horizontal_tolerance`` (job units), more than 0.

    Returns
    -------
    ndarray of bool
        True where ``r95 > tolerance`` (a radius equal to it passes).

    Raises
    ------
    JobFileError
        If the tolerance is not a finite number above 0.
    """
    try:
        tol = float(tolerance)
    except (TypeError, ValueError):
        tol = math.nan
    if not math.isfinite(tol) or tol <= 0:
        raise JobFileError(f"check.horizontal_tolerance = {tolerance!r}: must be a number above 0")
    return np.asarray(np.asarray(r95, dtype=float) > tol)
