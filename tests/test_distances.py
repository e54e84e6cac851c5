"""solver.distances against published values and independent reference libraries.

References used below:
- geographiclib (Karney 2013, "Algorithms for geodesics") on the WGS-84 ellipsoid and, with
  flattening 0, on a sphere of radius EARTH_MEAN_RADIUS_KM: an independent check of the
  haversine code, and a wiring check (units, argument order, ellipsoid) of the geopy call.
- The Geoscience Australia worked example of the Vincenty (1975) inverse, Flinders Peak to
  Buninyong.
- Closed forms on the sphere and along the equator, worked out in the comments.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic
from hypothesis import given
from hypothesis import strategies as st

from solver.coordinates import Position
from solver.distances import (
    DEFAULT_DETOUR_FACTOR,
    DEFAULT_SPEED_KMH,
    DISTANCE_MODES,
    EARTH_MEAN_RADIUS_KM,
    DriveOverride,
    TravelMatrix,
    build_travel_matrix,
    geodesic_km,
    great_circle_km,
    travel_matrix_from_arrays,
)
from solver.errors import InvalidInput

WGS84_SEMI_MAJOR_AXIS_M = 6378137.0  # WGS-84 defining parameter a (NIMA TR8350.2, Table 3.1)
# geographiclib's stated error bound for WGS-84, 15 nm (GeographicLib documentation; from memory)
GEOGRAPHICLIB_KM = 15e-12
MEAN_SPHERE = Geodesic(EARTH_MEAN_RADIUS_KM * 1000.0, 0.0)  # flattening 0: a sphere


def _dms(degrees: int, minutes: int, seconds: float) -> float:
    return degrees + minutes / 60.0 + seconds / 3600.0


def _ellipsoid_km(a: tuple[float, float], b: tuple[float, float]) -> float:
    return Geodesic.WGS84.Inverse(a[0], a[1], b[0], b[1], Geodesic.DISTANCE)["s12"] / 1000.0


def _sphere_km(a: tuple[float, float], b: tuple[float, float]) -> float:
    return MEAN_SPHERE.Inverse(a[0], a[1], b[0], b[1], Geodesic.DISTANCE)["s12"] / 1000.0


latitudes = st.floats(min_value=-90.0, max_value=90.0, allow_nan=False)
longitudes = st.floats(min_value=-180.0, max_value=180.0, allow_nan=False)
points = st.tuples(latitudes, longitudes)


# --- geodesic on WGS-84 ------------------------------------------------------------------------

# Geoscience Australia worked example of Vincenty's (1975) inverse formula on GRS80, from memory:
# Flinders Peak 37°57'03.72030"S 144°25'29.52440"E to Buninyong 37°39'10.15610"S
# 143°55'35.38390"E, ellipsoidal distance 54972.271 m. GRS80 and WGS-84 differ only in
# flattening (by about 5e-9 relative), which moves this 55 km line by well under 1 micrometre.
FLINDERS_PEAK = (-_dms(37, 57, 3.72030), _dms(144, 25, 29.52440))
BUNINYONG = (-_dms(37, 39, 10.15610), _dms(143, 55, 35.38390))
FLINDERS_PEAK_TO_BUNINYONG_M = 54972.271


def test_geodesic_matches_flinders_peak_to_buninyong_worked_example():
    assert geodesic_km(FLINDERS_PEAK, BUNINYONG) * 1000.0 == pytest.approx(
        FLINDERS_PEAK_TO_BUNINYONG_M, abs=1e-3
    )


def test_geodesic_accepts_positions_and_pairs_alike():
    by_position = geodesic_km(Position(*FLINDERS_PEAK), Position(*BUNINYONG))
    assert by_position == geodesic_km(FLINDERS_PEAK, BUNINYONG)


@pytest.mark.parametrize(
    ("a", "b", "expected_m"),
    [
        # Along the equator the geodesic is the equator itself while the longitude difference
        # is below (1 - f) * 180°, so its length is a * Δλ: a quarter turn is a * π / 2
        # (equatorial geodesics; from memory).
        ((0.0, 0.0), (0.0, 90.0), WGS84_SEMI_MAJOR_AXIS_M * math.pi / 2),
        ((0.0, -30.0), (0.0, 30.0), WGS84_SEMI_MAJOR_AXIS_M * math.pi / 3),
        # WGS-84 meridian quadrant, equator to pole: 10 001 965.729 m (from memory).
        ((0.0, 0.0), (90.0, 0.0), 10_001_965.729),
        ((-90.0, 45.0), (0.0, 45.0), 10_001_965.729),
    ],
)
def test_geodesic_matches_closed_forms(a, b, expected_m):
    assert geodesic_km(a, b) * 1000.0 == pytest.approx(expected_m, abs=1e-3)


# Pairs chosen to cover the hard cases for an inverse geodesic solver; the reference is
# geographiclib's Geodesic.WGS84.Inverse (Karney 2013).
GEODESIC_CASES = [
    pytest.param((52.0, 5.0), (52.0, 5.0), id="same point"),
    pytest.param((52.0, 5.0), (52.000009, 5.0), id="about 1 m"),
    pytest.param((52.0, 5.0), (52.0, 5.000001), id="about 7 cm east"),
    pytest.param((48.85, 2.35), (48.2, 3.1), id="regional"),
    pytest.param((51.5, -0.1), (40.7, -74.0), id="transatlantic"),
    pytest.param((-33.9, 151.2), (51.5, -0.1), id="half the globe"),
    pytest.param((0.0, 0.0), (0.5, 179.5), id="near-antipodal, equatorial"),
    pytest.param((30.0, 0.0), (-29.9, 179.8), id="near-antipodal, mid-latitude"),
    pytest.param((0.0, 0.0), (0.0, 180.0), id="antipodal on the equator"),
    pytest.param((10.0, 20.0), (-10.0, -160.0), id="antipodal off the equator"),
    pytest.param((80.0, 0.0), (80.0, 180.0), id="over the north pole"),
    pytest.param((-85.0, 10.0), (-85.0, -170.0), id="over the south pole"),
    pytest.param((90.0, 0.0), (-90.0, 0.0), id="pole to pole"),
    pytest.param((10.0, 179.9), (10.0, -179.9), id="across the antimeridian"),
]


@pytest.mark.parametrize(("a", "b"), GEODESIC_CASES)
def test_geodesic_matches_geographiclib(a, b):
    assert geodesic_km(a, b) == pytest.approx(_ellipsoid_km(a, b), rel=1e-12, abs=1e-9)


@given(points, points)
def test_geodesic_matches_geographiclib_for_random_pairs(a, b):
    assert geodesic_km(a, b) == pytest.approx(_ellipsoid_km(a, b), rel=1e-12, abs=1e-9)


@given(points, points)
def test_geodesic_is_symmetric_and_non_negative(a, b):
    forward, backward = geodesic_km(a, b), geodesic_km(b, a)
    assert forward >= 0.0
    assert forward == pytest.approx(backward, rel=1e-12, abs=1e-9)


# --- great circle on the mean sphere -----------------------------------------------------------


def test_great_circle_by_hand_along_the_60th_parallel():
    # Haversine formula (Sinnott 1984) by hand, from (60°N, 0°) to (60°N, 90°E):
    #   hav(Δφ)          = sin²(0° / 2)              = 0
    #   cos φ1 · cos φ2  = cos 60° · cos 60°          = 0.5 · 0.5 = 0.25
    #   hav(Δλ)          = sin²(90° / 2) = sin² 45°   = 0.5
    #   h                = 0 + 0.25 · 0.5             = 0.125
    #   c                = 2 · asin(√0.125) = 2 · asin(0.353553391) = 0.722734248 rad
    #   d                = 6371.0088 km · 0.722734248 = 4604.546 km
    # Cross-check by the spherical law of cosines, a different formula:
    #   cos c = sin φ1 sin φ2 + cos φ1 cos φ2 cos Δλ = 0.75 + 0.25 · 0 = 0.75,  c = acos(0.75).
    assert great_circle_km((60.0, 0.0), (60.0, 90.0)) == pytest.approx(4604.546, abs=1e-3)
    assert great_circle_km((60.0, 0.0), (60.0, 90.0)) == pytest.approx(
        EARTH_MEAN_RADIUS_KM * math.acos(0.75), rel=1e-14
    )


@pytest.mark.parametrize(
    ("a", "b", "expected_km"),
    [
        # Closed forms on a sphere of radius R: an arc of angle c has length R · c.
        ((0.0, 0.0), (0.0, 0.0), 0.0),
        ((0.0, 0.0), (1.0, 0.0), EARTH_MEAN_RADIUS_KM * math.pi / 180),  # 111.195 km
        ((0.0, 0.0), (0.0, 90.0), EARTH_MEAN_RADIUS_KM * math.pi / 2),  # quarter turn
        ((0.0, 0.0), (90.0, 123.0), EARTH_MEAN_RADIUS_KM * math.pi / 2),  # equator to pole
        ((0.0, 0.0), (0.0, 180.0), EARTH_MEAN_RADIUS_KM * math.pi),  # antipodes
        ((45.0, 10.0), (-45.0, -170.0), EARTH_MEAN_RADIUS_KM * math.pi),  # antipodes
        ((90.0, 0.0), (-90.0, 0.0), EARTH_MEAN_RADIUS_KM * math.pi),  # pole to pole
        ((10.0, 179.5), (10.0, -179.5), None),  # across the antimeridian: checked below
    ],
)
def test_great_circle_matches_closed_forms(a, b, expected_km):
    if expected_km is None:
        expected_km = great_circle_km((10.0, -0.5), (10.0, 0.5))  # same arc, shifted 180°
    assert great_circle_km(a, b) == pytest.approx(expected_km, rel=1e-14, abs=1e-12)


@pytest.mark.parametrize(("a", "b"), GEODESIC_CASES)
def test_great_circle_matches_geographiclib_sphere(a, b):
    assert great_circle_km(a, b) == pytest.approx(_sphere_km(a, b), rel=1e-12, abs=1e-9)


@given(points, points)
def test_great_circle_matches_geographiclib_sphere_for_random_pairs(a, b):
    assert great_circle_km(a, b) == pytest.approx(_sphere_km(a, b), rel=1e-12, abs=1e-9)


@given(
    points,
    st.floats(min_value=-1e-3, max_value=1e-3, allow_nan=False),
    st.floats(min_value=-1e-3, max_value=1e-3, allow_nan=False),
)
def test_great_circle_is_accurate_for_tiny_distances(a, d_lat, d_lon):
    b = (max(-90.0, min(90.0, a[0] + d_lat)), max(-180.0, min(180.0, a[1] + d_lon)))
    # Relative accuracy from about 100 m down to zero, where a 1 - cos form would lose it all;
    # the absolute floor is geographiclib's own stated error bound, 15 nm.
    assert great_circle_km(a, b) == pytest.approx(_sphere_km(a, b), rel=1e-9, abs=GEOGRAPHICLIB_KM)


@given(
    points,
    st.floats(min_value=-1e-3, max_value=1e-3, allow_nan=False),
    st.floats(min_value=-1e-3, max_value=1e-3, allow_nan=False),
)
def test_great_circle_is_accurate_near_antipodes(a, d_lat, d_lon):
    antipode_lon = a[1] - 180.0 if a[1] > 0 else a[1] + 180.0
    b = (max(-90.0, min(90.0, -a[0] + d_lat)), max(-180.0, min(180.0, antipode_lon + d_lon)))
    # Within 1 micrometre: forming 1 - hav(c) here would cost about 6 cm (sqrt of eps · R).
    assert great_circle_km(a, b) == pytest.approx(_sphere_km(a, b), rel=0, abs=1e-9)


@given(points, points)
def test_great_circle_is_symmetric_and_at_most_half_a_circumference(a, b):
    forward = great_circle_km(a, b)
    assert forward == great_circle_km(b, a)
    assert 0.0 <= forward <= EARTH_MEAN_RADIUS_KM * math.pi * (1 + 1e-15)


# --- point validation ---------------------------------------------------------------------------


@pytest.mark.parametrize("distance", [geodesic_km, great_circle_km])
@pytest.mark.parametrize(
    ("a", "field", "fragments"),
    [
        ((123.4, 5.0), "a.lat", ["latitude 123.4", "-90..90"]),
        ((-90.5, 5.0), "a.lat", ["latitude -90.5", "-90..90"]),
        ((52.0, 200.0), "a.lon", ["longitude 200.0", "-180..180"]),
        ((float("nan"), 5.0), "a.lat", ["latitude nan", "finite"]),
        ((52.0, float("inf")), "a.lon", ["longitude inf", "finite"]),
        (("52", 5.0), "a.lat", ["latitude '52'"]),
        ((True, 5.0), "a.lat", ["latitude True"]),
        ((52.0, 5.0, 10.0), "a", ["(52.0, 5.0, 10.0)", "3 items"]),
        ("52,5", "a", ["'52,5'", "(lat, lon) pair"]),
        (None, "a", ["None", "(lat, lon) pair"]),
    ],
)
def test_bad_points_are_refused_by_name_and_value(distance, a, field, fragments):
    with pytest.raises(InvalidInput) as caught:
        distance(a, (52.0, 5.0))
    assert caught.value.field == field
    for fragment in fragments:
        assert fragment in str(caught.value)


# --- the travel matrix -------------------------------------------------------------------------

# Inputs only; every expected value comes from geographiclib or the rules themselves.
SOME_POSITIONS = [(51.05, 3.72), (51.22, 4.40), (50.85, 4.35), (50.63, 5.57), (51.05, 3.72)]


@pytest.mark.parametrize(
    ("mode", "reference"), [("geodesic", _ellipsoid_km), ("great-circle", _sphere_km)]
)
@pytest.mark.parametrize(("detour_factor", "speed_kmh"), [(1.0, 60.0), (1.25, 40.0), (3.0, 200.0)])
def test_matrix_applies_detour_factor_and_speed(mode, reference, detour_factor, speed_kmh):
    matrix = build_travel_matrix(
        SOME_POSITIONS, mode=mode, detour_factor=detour_factor, speed_kmh=speed_kmh
    )
    expected_km = np.array(
        [[reference(a, b) * detour_factor for b in SOME_POSITIONS] for a in SOME_POSITIONS]
    )
    np.testing.assert_allclose(matrix.km, expected_km, rtol=1e-12, atol=1e-9)
    np.testing.assert_allclose(matrix.minutes, expected_km / speed_kmh * 60.0, rtol=1e-12)
    assert matrix.n == len(SOME_POSITIONS)
    assert matrix.symmetric()
    assert not matrix.user_entered_km.any() and not matrix.user_entered_minutes.any()


def test_matrix_defaults_are_geodesic_with_default_detour_and_speed():
    matrix = build_travel_matrix(SOME_POSITIONS[:3])
    leg_km = _ellipsoid_km(SOME_POSITIONS[0], SOME_POSITIONS[1]) * DEFAULT_DETOUR_FACTOR
    assert matrix.km[0, 1] == pytest.approx(leg_km, rel=1e-12)
    assert matrix.minutes[0, 1] == pytest.approx(leg_km / DEFAULT_SPEED_KMH * 60.0, rel=1e-12)


def test_matrix_diagonal_is_zero_and_repeated_positions_are_zero_apart():
    matrix = build_travel_matrix(SOME_POSITIONS)
    assert np.all(np.diag(matrix.km) == 0.0) and np.all(np.diag(matrix.minutes) == 0.0)
    assert matrix.km[0, 4] == 0.0  # positions 0 and 4 are the same place


def test_matrix_accepts_positions_tuples_and_lat_lon_objects_alike():
    class Spot:
        def __init__(self, lat, lon):
            self.lat, self.lon = lat, lon

    by_tuple = build_travel_matrix(SOME_POSITIONS)
    assert build_travel_matrix([Position(*p) for p in SOME_POSITIONS]) == by_tuple
    assert build_travel_matrix([Spot(*p) for p in SOME_POSITIONS]) == by_tuple
    assert build_travel_matrix(np.array(SOME_POSITIONS)) == by_tuple


def test_matrix_arrays_are_read_only():
    matrix = build_travel_matrix(SOME_POSITIONS[:3])
    for array in (matrix.km, matrix.minutes, matrix.user_entered_km, matrix.user_entered_minutes):
        with pytest.raises(ValueError, match="read-only"):
            array[0, 1] = 1


def test_override_with_km_only_replaces_one_direction_and_derives_minutes():
    speed_kmh = 45.0
    plain = build_travel_matrix(SOME_POSITIONS[:3], speed_kmh=speed_kmh)
    matrix = build_travel_matrix(
        SOME_POSITIONS[:3], speed_kmh=speed_kmh, overrides={(0, 1): DriveOverride(km=12.5)}
    )
    assert matrix.km[0, 1] == 12.5
    assert matrix.minutes[0, 1] == pytest.approx(12.5 / speed_kmh * 60.0)
    assert matrix.km[1, 0] == plain.km[1, 0] and matrix.minutes[1, 0] == plain.minutes[1, 0]
    assert np.argwhere(matrix.user_entered_km).tolist() == [[0, 1]]
    assert not matrix.user_entered_minutes.any()
    assert not matrix.symmetric()
    unchanged = np.ones((3, 3), dtype=bool)
    unchanged[0, 1] = False
    assert np.array_equal(matrix.km[unchanged], plain.km[unchanged])


def test_override_with_minutes_only_keeps_computed_km():
    plain = build_travel_matrix(SOME_POSITIONS[:3])
    overrides = {(2, 0): DriveOverride(minutes=33.0)}
    matrix = build_travel_matrix(SOME_POSITIONS[:3], overrides=overrides)
    assert matrix.minutes[2, 0] == 33.0
    assert matrix.km[2, 0] == plain.km[2, 0]
    assert np.argwhere(matrix.user_entered_minutes).tolist() == [[2, 0]]
    assert not matrix.user_entered_km.any()
    assert matrix.minutes[0, 2] == plain.minutes[0, 2]


def test_overrides_with_both_and_in_both_directions_stay_asymmetric():
    matrix = build_travel_matrix(
        SOME_POSITIONS[:3],
        overrides={
            (0, 2): DriveOverride(km=20.0, minutes=25.0),
            (2, 0): DriveOverride(km=31.0, minutes=0.0),
            (1, 2): DriveOverride(km=0.0),
        },
    )
    assert (matrix.km[0, 2], matrix.minutes[0, 2]) == (20.0, 25.0)
    assert (matrix.km[2, 0], matrix.minutes[2, 0]) == (31.0, 0.0)
    assert (matrix.km[1, 2], matrix.minutes[1, 2]) == (0.0, 0.0)
    assert sorted(map(tuple, np.argwhere(matrix.user_entered_km).tolist())) == [
        (0, 2),
        (1, 2),
        (2, 0),
    ]
    assert sorted(map(tuple, np.argwhere(matrix.user_entered_minutes).tolist())) == [(0, 2), (2, 0)]


@given(
    st.lists(points, min_size=2, max_size=6),
    st.floats(min_value=1.0, max_value=3.0),
    st.floats(min_value=1.0, max_value=200.0),
    st.data(),
)
def test_matrix_property_entries_follow_the_rules(positions, detour_factor, speed_kmh, data):
    n = len(positions)
    pairs = st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)).filter(lambda p: p[0] != p[1])
    amounts = st.none() | st.floats(min_value=0.0, max_value=1e4)
    overrides = data.draw(
        st.dictionaries(
            pairs,
            st.tuples(amounts, amounts)
            .filter(lambda t: t != (None, None))
            .map(lambda t: DriveOverride(km=t[0], minutes=t[1])),
            max_size=4,
        )
    )
    matrix = build_travel_matrix(
        positions,
        mode="great-circle",
        detour_factor=detour_factor,
        speed_kmh=speed_kmh,
        overrides=overrides,
    )
    for i, a in enumerate(positions):
        for j, b in enumerate(positions):
            override = overrides.get((i, j), DriveOverride(km=None, minutes=0.0))
            user_km = (i, j) in overrides and override.km is not None
            user_minutes = (i, j) in overrides and override.minutes is not None
            expected_km = override.km if user_km else _sphere_km(a, b) * detour_factor * (i != j)
            expected_minutes = override.minutes if user_minutes else expected_km / speed_kmh * 60
            assert matrix.km[i, j] == pytest.approx(expected_km, rel=1e-12, abs=1e-9)
            assert matrix.minutes[i, j] == pytest.approx(expected_minutes, rel=1e-12, abs=1e-9)
            assert matrix.user_entered_km[i, j] == user_km
            assert matrix.user_entered_minutes[i, j] == user_minutes


@pytest.mark.parametrize("n", [0, 1, 2])
def test_matrix_for_zero_one_and_two_positions(n):
    matrix = build_travel_matrix(SOME_POSITIONS[:n])
    assert matrix.n == n
    assert matrix.km.shape == matrix.minutes.shape == (n, n)
    assert matrix.symmetric()
    if n == 2:
        assert matrix.km[0, 1] == matrix.km[1, 0] > 0


@pytest.mark.parametrize(
    ("kwargs", "field", "fragments"),
    [
        ({"mode": "manhattan"}, "mode", ["'manhattan'", "'geodesic'", "'great-circle'"]),
        ({"mode": None}, "mode", ["None"]),
        ({"detour_factor": 0.9}, "detour_factor", ["0.9", "1..3"]),
        ({"detour_factor": 3.5}, "detour_factor", ["3.5", "1..3"]),
        ({"detour_factor": float("nan")}, "detour_factor", ["nan", "1..3"]),
        ({"detour_factor": float("inf")}, "detour_factor", ["inf", "1..3"]),
        ({"detour_factor": "1.3"}, "detour_factor", ["'1.3'", "1..3"]),
        ({"speed_kmh": 0}, "speed_kmh", ["speed_kmh is 0", "200"]),
        ({"speed_kmh": -30.0}, "speed_kmh", ["-30.0"]),
        ({"speed_kmh": 250.0}, "speed_kmh", ["250.0", "200"]),
        ({"speed_kmh": float("nan")}, "speed_kmh", ["nan"]),
        ({"speed_kmh": float("inf")}, "speed_kmh", ["inf"]),
        ({"overrides": {(0, 3): DriveOverride(km=1.0)}}, "overrides", ["(0, 3)", "0..2"]),
        ({"overrides": {(-1, 0): DriveOverride(km=1.0)}}, "overrides", ["(-1, 0)", "0..2"]),
        ({"overrides": {(1, 1): DriveOverride(km=1.0)}}, "overrides", ["(1, 1)", "itself"]),
        ({"overrides": {("a", 0): DriveOverride(km=1.0)}}, "overrides", ["('a', 0)"]),
        ({"overrides": {(0, 1): 12.0}}, "overrides[(0, 1)]", ["12.0", "DriveOverride"]),
        ({"overrides": [((0, 1), DriveOverride(km=1.0))]}, "overrides", ["mapping"]),
    ],
)
def test_bad_matrix_options_are_refused_by_name_and_value(kwargs, field, fragments):
    with pytest.raises(InvalidInput) as caught:
        build_travel_matrix(SOME_POSITIONS[:3], **kwargs)
    assert caught.value.field == field
    for fragment in fragments:
        assert fragment in str(caught.value)


@pytest.mark.parametrize(
    ("positions", "field", "fragments"),
    [
        ([(51.0, 4.0), (123.4, 4.0)], "positions[1].lat", ["positions[1]", "latitude 123.4"]),
        ([(51.0, -181.0)], "positions[0].lon", ["positions[0]", "longitude -181.0", "-180..180"]),
        ([(51.0, 4.0), "51,4"], "positions[1]", ["'51,4'"]),
        (42, "positions", ["positions is 42"]),
        ("51,4", "positions", ["'51,4'"]),
    ],
)
def test_bad_positions_are_refused_by_index_and_value(positions, field, fragments):
    with pytest.raises(InvalidInput) as caught:
        build_travel_matrix(positions)
    assert caught.value.field == field
    for fragment in fragments:
        assert fragment in str(caught.value)


@pytest.mark.parametrize(
    ("kwargs", "field", "fragments"),
    [
        ({}, "km", ["neither km nor minutes"]),
        ({"km": -1.0}, "km", ["km is -1.0", ">= 0"]),
        ({"km": float("nan")}, "km", ["km is nan"]),
        ({"km": float("inf"), "minutes": 3.0}, "km", ["km is inf"]),
        ({"minutes": -0.5}, "minutes", ["minutes is -0.5"]),
        ({"km": 3.0, "minutes": float("nan")}, "minutes", ["minutes is nan"]),
        ({"minutes": "10"}, "minutes", ["minutes is '10'"]),
    ],
)
def test_bad_drive_overrides_are_refused_by_name_and_value(kwargs, field, fragments):
    with pytest.raises(InvalidInput) as caught:
        DriveOverride(**kwargs)
    assert caught.value.field == field
    for fragment in fragments:
        assert fragment in str(caught.value)


# --- matrices given as arrays ------------------------------------------------------------------


def test_matrix_from_km_array_derives_minutes_and_marks_legs_as_entered():
    km = [[0, 10, 20], [12, 0, 5], [20, 5, 0]]
    matrix = travel_matrix_from_arrays(km, speed_kmh=60.0)
    np.testing.assert_array_equal(matrix.km, np.array(km, dtype=float))
    np.testing.assert_array_equal(matrix.minutes, np.array(km, dtype=float))  # 1 km/min
    assert np.array_equal(matrix.user_entered_km, ~np.eye(3, dtype=bool))
    assert not matrix.user_entered_minutes.any()
    assert not matrix.symmetric()
    assert matrix.km.dtype == np.float64 and not matrix.km.flags.writeable


def test_matrix_from_arrays_keeps_given_minutes_and_copies_its_input():
    km = np.array([[0.0, 3.0], [3.0, 0.0]])
    minutes = np.array([[0.0, 7.0], [9.0, 0.0]])
    matrix = travel_matrix_from_arrays(km, minutes)
    km[0, 1] = minutes[0, 1] = 99.0
    assert matrix.km[0, 1] == 3.0 and matrix.minutes[0, 1] == 7.0
    assert matrix.user_entered_minutes.tolist() == [[False, True], [True, False]]
    assert matrix.symmetric(tol=0.0) is False  # minutes differ although km agree


def test_symmetric_tolerance_is_absolute():
    matrix = travel_matrix_from_arrays([[0.0, 1.0], [1.0 + 1e-7, 0.0]])
    assert not matrix.symmetric()
    assert matrix.symmetric(tol=1e-6)


@pytest.mark.parametrize("n", [0, 1])
def test_matrix_from_tiny_arrays(n):
    assert travel_matrix_from_arrays(np.zeros((n, n))).n == n


@pytest.mark.parametrize(
    ("km", "minutes", "field", "fragments"),
    [
        ([[0, 1, 2], [1, 0, 3]], None, "km", ["(2, 3)", "square"]),
        ([0, 1], None, "km", ["(2,)", "square"]),
        ([[0, 1], [1]], None, "km", ["square matrix of numbers"]),
        ([[0, "x"], [1, 0]], None, "km", ["'x'"]),
        ([[0, float("nan")], [1, 0]], None, "km[0, 1]", ["km[0, 1] is nan", "finite"]),
        ([[0, 1], [float("inf"), 0]], None, "km[1, 0]", ["km[1, 0] is inf", "finite"]),
        ([[0, -2.5], [1, 0]], None, "km[0, 1]", ["km[0, 1] is -2.5", ">= 0"]),
        ([[0, 1], [1, 4.0]], None, "km[1, 1]", ["km[1, 1] is 4.0", "0 (a position to itself)"]),
        ([[0, 1], [1, 0]], [[0, 1, 1], [1, 0, 1]], "minutes", ["(2, 3)"]),
        ([[0, 1], [1, 0]], [[0, 1], [-1, 0]], "minutes[1, 0]", ["minutes[1, 0] is -1.0"]),
        ([[0, 1], [1, 0]], np.zeros((3, 3)), "minutes", ["(3, 3)", "(2, 2)"]),
    ],
)
def test_bad_arrays_are_refused_by_name_and_value(km, minutes, field, fragments):
    with pytest.raises(InvalidInput) as caught:
        travel_matrix_from_arrays(km, minutes)
    assert caught.value.field == field
    for fragment in fragments:
        assert fragment in str(caught.value)


@pytest.mark.parametrize("speed_kmh", [0.0, -1.0, 201.0, float("nan"), float("inf")])
def test_matrix_from_arrays_refuses_bad_speed(speed_kmh):
    with pytest.raises(InvalidInput, match="speed_kmh") as caught:
        travel_matrix_from_arrays([[0.0]], speed_kmh=speed_kmh)
    assert caught.value.field == "speed_kmh"


def test_travel_matrix_validates_when_built_directly():
    with pytest.raises(InvalidInput) as caught:
        TravelMatrix(
            km=np.zeros((2, 2)),
            minutes=np.zeros((2, 2)),
            user_entered_km=np.zeros((3, 3), dtype=bool),
            user_entered_minutes=np.zeros((2, 2), dtype=bool),
        )
    assert caught.value.field == "user_entered_km"


def test_distance_modes_name_every_mode_the_builder_accepts():
    for mode in DISTANCE_MODES:
        assert build_travel_matrix(SOME_POSITIONS[:2], mode=mode).n == 2
