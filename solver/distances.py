"""Driving distances and times between positions, as one square travel matrix.

A position is anything with ``.lat`` / ``.lon`` (a :class:`solver.coordinates.Position`)
or a plain ``(lat, lon)`` pair, in decimal degrees on WGS-84. Road distance is
estimated as straight-line distance times a detour factor, driving time as road
distance over an average speed; the user may replace either for any ordered pair,
so the matrix may be asymmetric. The exact solver takes any such matrix as given.
"""

from __future__ import annotations

import math
import numbers
import reprlib
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from geopy.distance import geodesic as _geopy_geodesic

from solver.coordinates import Position
from solver.errors import InvalidInput

__all__ = [
    "EARTH_MEAN_RADIUS_KM",
    "DEFAULT_DETOUR_FACTOR",
    "DEFAULT_SPEED_KMH",
    "DISTANCE_MODES",
    "geodesic_km",
    "great_circle_km",
    "DriveOverride",
    "TravelMatrix",
    "build_travel_matrix",
    "travel_matrix_from_arrays",
]

# IUGG mean radius R1 (Moritz 2000, "Geodetic Reference System 1980"), km
EARTH_MEAN_RADIUS_KM = 6371.0088
# Road km per straight-line km (road circuity); common practice, no source
DEFAULT_DETOUR_FACTOR = 1.3
# Door-to-door average over mixed town and country driving, km/h; common practice, no source
DEFAULT_SPEED_KMH = 50.0

DISTANCE_MODES = ("geodesic", "great-circle")

_DETOUR_FACTOR_RANGE = (1.0, 3.0)  # a road network longer than 3x the crow's flight is a typo
_MAX_SPEED_KMH = 200.0  # above any legal average door-to-door speed; a typo guard


class _LatLonLike(Protocol):
    @property
    def lat(self) -> float: ...

    @property
    def lon(self) -> float: ...


_PointLike = Position | _LatLonLike | tuple[float, float]


# --- straight-line distances -------------------------------------------------------------------


def geodesic_km(a: _PointLike, b: _PointLike) -> float:
    """Shortest distance in km between ``a`` and ``b`` on the WGS-84 ellipsoid.

    Delegates to ``geopy.distance.geodesic``, which implements Karney (2013),
    "Algorithms for geodesics", J. Geodesy 87:43-55: accurate to a few nanometres,
    and convergent for every pair including nearly antipodal ones.
    """
    lat_a, lon_a = _lat_lon(a, field="a")
    lat_b, lon_b = _lat_lon(b, field="b")
    return _geodesic_km_unchecked(lat_a, lon_a, lat_b, lon_b)


def great_circle_km(a: _PointLike, b: _PointLike) -> float:
    """Great-circle distance in km between ``a`` and ``b`` on a sphere of radius
    :data:`EARTH_MEAN_RADIUS_KM`, by the haversine formula (Sinnott 1984,
    "Virtues of the Haversine", Sky and Telescope 68(2):159).

    Accurate to rounding for every pair, from coincident to antipodal points.
    """
    lat_a, lon_a = _lat_lon(a, field="a")
    lat_b, lon_b = _lat_lon(b, field="b")
    return _great_circle_km_unchecked(lat_a, lon_a, lat_b, lon_b)


def _geodesic_km_unchecked(lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> float:
    return float(_geopy_geodesic((lat_a, lon_a), (lat_b, lon_b), ellipsoid="WGS-84").km)


def _great_circle_km_unchecked(lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> float:
    # Differences are taken in degrees, where nearby values subtract exactly, and converted
    # once; subtracting two rounded radian values would cost digits on short legs.
    delta_phi = math.radians(lat_b - lat_a)
    sum_phi = math.radians(lat_b + lat_a)
    delta_lambda = math.radians(lon_b - lon_a)
    cos_product = math.cos(math.radians(lat_a)) * math.cos(math.radians(lat_b))
    # hav(c) for the arc itself, and hav(pi - c) as the haversine of the arc from ``a`` to the
    # antipode of ``b``. Both are sums of non-negative terms, so neither loses digits to
    # cancellation, unlike forming 1 - hav(c); atan2 then stays well conditioned at both ends.
    hav_arc = math.sin(delta_phi / 2) ** 2 + cos_product * math.sin(delta_lambda / 2) ** 2
    hav_complement = math.sin(sum_phi / 2) ** 2 + cos_product * math.cos(delta_lambda / 2) ** 2
    central_angle = 2.0 * math.atan2(math.sqrt(hav_arc), math.sqrt(hav_complement))
    return EARTH_MEAN_RADIUS_KM * central_angle


_STRAIGHT_LINE_KM: dict[str, Callable[[float, float, float, float], float]] = {
    "geodesic": _geodesic_km_unchecked,
    "great-circle": _great_circle_km_unchecked,
}


# --- the travel matrix -------------------------------------------------------------------------


@dataclass(frozen=True)
class DriveOverride:
    """What the user entered for one ordered pair (from -> to): road km, minutes, or both."""

    km: float | None = None
    minutes: float | None = None

    def __post_init__(self) -> None:
        if self.km is None and self.minutes is None:
            raise InvalidInput(
                "drive override has neither km nor minutes; give at least one",
                field="km",
                value=None,
            )
        for name in ("km", "minutes"):
            value = getattr(self, name)
            if value is not None:
                checked = _non_negative(value, field=name, what="drive override")
                object.__setattr__(self, name, checked)


@dataclass(frozen=True, eq=False, repr=False)
class TravelMatrix:
    """Road km and driving minutes for every ordered pair of ``n`` positions.

    ``km[i, j]`` is the leg from position ``i`` to position ``j``. Every entry is finite
    and non-negative, the diagonal is zero, and all four arrays are read-only copies.
    ``user_entered_km`` / ``user_entered_minutes`` mark the entries the user typed in.
    """

    km: np.ndarray
    minutes: np.ndarray
    user_entered_km: np.ndarray
    user_entered_minutes: np.ndarray

    def __post_init__(self) -> None:
        km = _leg_matrix(self.km, field="km")
        minutes = _leg_matrix(self.minutes, field="minutes")
        if minutes.shape != km.shape:
            raise InvalidInput(
                f"minutes has shape {minutes.shape}; expected {km.shape} like km",
                field="minutes",
                value=minutes.shape,
            )
        object.__setattr__(self, "km", km)
        object.__setattr__(self, "minutes", minutes)
        for name in ("user_entered_km", "user_entered_minutes"):
            mask = _frozen(np.array(getattr(self, name), dtype=bool))
            if mask.shape != km.shape:
                raise InvalidInput(
                    f"{name} has shape {mask.shape}; expected {km.shape} like km",
                    field=name,
                    value=mask.shape,
                )
            object.__setattr__(self, name, mask)

    @property
    def n(self) -> int:
        """How many positions the matrix covers."""
        return int(self.km.shape[0])

    def symmetric(self, *, tol: float = 1e-9) -> bool:
        """True if both km and minutes equal their transposes to within ``tol`` (absolute)."""
        if not (isinstance(tol, numbers.Real) and math.isfinite(tol) and tol >= 0):
            raise InvalidInput(
                f"tol is {_shown(tol)}; expected a finite number >= 0", field="tol", value=tol
            )
        return bool(
            np.allclose(self.km, self.km.T, rtol=0.0, atol=tol)
            and np.allclose(self.minutes, self.minutes.T, rtol=0.0, atol=tol)
        )

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, TravelMatrix):
            return NotImplemented
        return all(
            np.array_equal(getattr(self, name), getattr(other, name))
            for name in ("km", "minutes", "user_entered_km", "user_entered_minutes")
        )

    __hash__ = None  # type: ignore[assignment]  # arrays are not hashable; equality is by value

    def __repr__(self) -> str:
        return (
            f"TravelMatrix(n={self.n}, user_entered_km={int(self.user_entered_km.sum())}, "
            f"user_entered_minutes={int(self.user_entered_minutes.sum())})"
        )


def build_travel_matrix(
    positions: Iterable[_PointLike],
    *,
    mode: str = "geodesic",
    detour_factor: float = DEFAULT_DETOUR_FACTOR,
    speed_kmh: float = DEFAULT_SPEED_KMH,
    overrides: Mapping[tuple[int, int], DriveOverride] | None = None,
) -> TravelMatrix:
    """Travel matrix over ``positions`` from straight-line distances and the user's entries.

    Guarantees: ``km = straight-line km * detour_factor`` and ``minutes = km / speed_kmh * 60``
    for every pair the user did not enter; an override for ``(i, j)`` replaces that one
    direction only (km alone: minutes follow from it at ``speed_kmh``; minutes alone: km
    stays computed). Straight-line km is the WGS-84 geodesic (Karney 2013) or the
    great-circle distance (haversine, Sinnott 1984), per ``mode``.
    """
    points = _positions(positions)
    straight_line_km = _mode(mode)
    detour = _detour_factor(detour_factor)
    speed = _speed_kmh(speed_kmh)
    n = len(points)
    entered = _overrides(overrides, n=n)

    straight_km = np.zeros((n, n))
    # Both distances are symmetric, so the upper triangle suffices; this halves the
    # pure-Python geodesic work, which dominates the build time.
    for i in range(n):
        lat_i, lon_i = points[i]
        for j in range(i + 1, n):
            straight_km[i, j] = straight_km[j, i] = straight_line_km(lat_i, lon_i, *points[j])

    km = straight_km * detour
    minutes = km / speed * 60.0
    user_km = np.zeros((n, n), dtype=bool)
    user_minutes = np.zeros((n, n), dtype=bool)
    for (i, j), override in entered.items():
        if override.km is not None:
            km[i, j] = override.km
            user_km[i, j] = True
        if override.minutes is not None:
            minutes[i, j] = override.minutes
            user_minutes[i, j] = True
        else:
            minutes[i, j] = km[i, j] / speed * 60.0
    return TravelMatrix(
        km=km, minutes=minutes, user_entered_km=user_km, user_entered_minutes=user_minutes
    )


def travel_matrix_from_arrays(
    km: object,
    minutes: object = None,
    *,
    speed_kmh: float = DEFAULT_SPEED_KMH,
) -> TravelMatrix:
    """Travel matrix from a given square ``km`` matrix (and optionally ``minutes``).

    Guarantees the same invariants as :func:`build_travel_matrix`: square, finite,
    non-negative, zero diagonal. Without ``minutes`` they are ``km / speed_kmh * 60``.
    Every off-diagonal km entry counts as user-entered, and so do the minutes if given.
    """
    speed = _speed_kmh(speed_kmh)
    km_matrix = _leg_matrix(km, field="km")
    off_diagonal = ~np.eye(km_matrix.shape[0], dtype=bool)
    return TravelMatrix(
        km=km_matrix,
        minutes=km_matrix / speed * 60.0 if minutes is None else minutes,
        user_entered_km=off_diagonal,
        user_entered_minutes=off_diagonal if minutes is not None else np.zeros_like(off_diagonal),
    )


# --- validation at the door ---------------------------------------------------------------------


def _lat_lon(point: object, *, field: str) -> tuple[float, float]:
    if hasattr(point, "lat") and hasattr(point, "lon"):
        lat, lon = getattr(point, "lat"), getattr(point, "lon")  # noqa: B009 - point is any object
    elif isinstance(point, Iterable) and not isinstance(point, str | bytes):
        pair = tuple(point)
        if len(pair) != 2:
            raise InvalidInput(
                f"{field} is {_shown(point)}; expected a (lat, lon) pair, got {len(pair)} items",
                field=field,
                value=point,
            )
        lat, lon = pair
    else:
        raise InvalidInput(
            f"{field} is {_shown(point)}; expected a Position or a (lat, lon) pair",
            field=field,
            value=point,
        )
    return (
        _degrees(lat, field=f"{field}.lat", name="latitude", limit=90.0),
        _degrees(lon, field=f"{field}.lon", name="longitude", limit=180.0),
    )


def _degrees(value: object, *, field: str, name: str, limit: float) -> float:
    owner = field.rsplit(".", 1)[0]
    if not _is_real(value) or not math.isfinite(float(value)):  # type: ignore[arg-type]
        raise InvalidInput(
            f"{owner} has {name} {_shown(value)}; expected a finite number of decimal degrees",
            field=field,
            value=value,
        )
    degrees = float(value)  # type: ignore[arg-type]
    if not -limit <= degrees <= limit:
        raise InvalidInput(
            f"{owner} has {name} {degrees!r}; expected -{limit:g}..{limit:g}",
            field=field,
            value=value,
        )
    return degrees


def _positions(positions: object) -> list[tuple[float, float]]:
    if not isinstance(positions, Iterable) or isinstance(positions, str | bytes | Mapping):
        raise InvalidInput(
            f"positions is {_shown(positions)}; expected a sequence of positions",
            field="positions",
            value=positions,
        )
    return [_lat_lon(point, field=f"positions[{k}]") for k, point in enumerate(positions)]


def _mode(mode: object) -> Callable[[float, float, float, float], float]:
    if not isinstance(mode, str) or mode not in _STRAIGHT_LINE_KM:
        raise InvalidInput(
            f"mode is {_shown(mode)}; expected one of {', '.join(map(repr, DISTANCE_MODES))}",
            field="mode",
            value=mode,
        )
    return _STRAIGHT_LINE_KM[mode]


def _detour_factor(value: object) -> float:
    low, high = _DETOUR_FACTOR_RANGE
    if not _is_real(value) or not low <= float(value) <= high:  # type: ignore[arg-type]
        raise InvalidInput(
            f"detour_factor is {_shown(value)}; expected {low:g}..{high:g} "
            "(road km per straight-line km)",
            field="detour_factor",
            value=value,
        )
    return float(value)  # type: ignore[arg-type]


def _speed_kmh(value: object) -> float:
    if not _is_real(value) or not 0.0 < float(value) <= _MAX_SPEED_KMH:  # type: ignore[arg-type]
        raise InvalidInput(
            f"speed_kmh is {_shown(value)}; expected more than 0 and at most {_MAX_SPEED_KMH:g}",
            field="speed_kmh",
            value=value,
        )
    return float(value)  # type: ignore[arg-type]


def _overrides(overrides: object, *, n: int) -> dict[tuple[int, int], DriveOverride]:
    if overrides is None:
        return {}
    if not isinstance(overrides, Mapping):
        raise InvalidInput(
            f"overrides is {_shown(overrides)}; "
            "expected a mapping of (from, to) index pairs to DriveOverride",
            field="overrides",
            value=overrides,
        )
    checked: dict[tuple[int, int], DriveOverride] = {}
    for key, override in overrides.items():
        if not (
            isinstance(key, tuple)
            and len(key) == 2
            and all(isinstance(k, numbers.Integral) and not isinstance(k, bool) for k in key)
        ):
            raise InvalidInput(
                f"overrides key {_shown(key)}; expected a (from, to) pair of position indices",
                field="overrides",
                value=key,
            )
        i, j = int(key[0]), int(key[1])
        for index in (i, j):
            if not 0 <= index < n:
                raise InvalidInput(
                    f"overrides key {_shown(key)} has index {index}; expected 0..{n - 1} "
                    f"for {n} positions",
                    field="overrides",
                    value=key,
                )
        if i == j:
            raise InvalidInput(
                f"overrides key {_shown(key)} is a leg from a position to itself; "
                "expected from != to",
                field="overrides",
                value=key,
            )
        if not isinstance(override, DriveOverride):
            raise InvalidInput(
                f"overrides[{_shown(key)}] is {_shown(override)}; expected a DriveOverride",
                field=f"overrides[{_shown(key)}]",
                value=override,
            )
        checked[(i, j)] = override
    return checked


def _non_negative(value: object, *, field: str, what: str) -> float:
    if not _is_real(value) or not math.isfinite(float(value)) or float(value) < 0:  # type: ignore[arg-type]
        raise InvalidInput(
            f"{what} {field} is {_shown(value)}; expected a finite number >= 0",
            field=field,
            value=value,
        )
    return float(value)  # type: ignore[arg-type]


_SHORT_REPR = reprlib.Repr()  # Python 3.11's Repr takes no keyword arguments
_SHORT_REPR.maxlist = _SHORT_REPR.maxtuple = _SHORT_REPR.maxdict = 4
_SHORT_REPR.maxstring = _SHORT_REPR.maxother = 40


def _shown(value: object) -> str:
    """The value as a message shows it: numpy scalars as plain numbers, long things cut short."""
    if isinstance(value, np.generic):
        value = value.item()
    return _SHORT_REPR.repr(value)


def _is_real(value: object) -> bool:
    return isinstance(value, numbers.Real) and not isinstance(value, bool | np.bool_)


def _float_array(value: object, *, field: str) -> np.ndarray:
    try:
        return np.array(value, dtype=float)
    except (TypeError, ValueError) as error:
        raise InvalidInput(
            f"{field} is {_shown(value)}; expected a square matrix of numbers ({error})",
            field=field,
            value=value,
        ) from None


def _leg_matrix(value: object, *, field: str) -> np.ndarray:
    matrix = _float_array(value, field=field)
    if matrix.ndim != 2 or matrix.shape[0] != matrix.shape[1]:
        raise InvalidInput(
            f"{field} has shape {matrix.shape}; expected a square n x n matrix",
            field=field,
            value=matrix.shape,
        )
    for bad, expectation in (
        (~np.isfinite(matrix), "a finite number"),
        (matrix < 0, "a number >= 0"),
        (np.diag(np.diag(matrix) != 0), "0 (a position to itself)"),
    ):
        if bad.any():
            i, j = (int(k) for k in np.argwhere(bad)[0])
            raise InvalidInput(
                f"{field}[{i}, {j}] is {_shown(matrix[i, j])}; expected {expectation}",
                field=f"{field}[{i}, {j}]",
                value=float(matrix[i, j]),
            )
    return _frozen(matrix)


def _frozen(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array
