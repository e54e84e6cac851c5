"""Reading and writing positions, checked against RFC 5870, sexagesimal arithmetic and geopy.

Sources named beside the rows:
- RFC 5870 (Mayrhofer & Spanring, 2010), the 'geo' URI scheme: §3.3 syntax (ABNF), §3.4.1 CRS
  identification, §3.4.2 WGS-84 ranges and "-0", §3.4.3 uncertainty, §6 examples.  The example
  URIs are quoted from memory of the RFC (they agree with other projects' tests that cite it).
- Degrees, minutes, seconds: deg + min/60 + sec/3600 is plain sexagesimal arithmetic (common
  practice, no single source); the expected values below are written as that sum.
- geopy (package index), whose Point parser reads fully marked d°m's" text with upper-case
  hemisphere letters; it is used as an independent reader for that form only, because it
  misreads unmarked degrees-and-minutes such as "41 24.2028, 2 10.4418".
"""

from __future__ import annotations

import dataclasses
import math
import re
from fractions import Fraction

import numpy as np
import pytest
from geopy.point import Point as GeopyPoint
from hypothesis import given
from hypothesis import strategies as st

from solver.coordinates import (
    Position,
    check_position,
    format_position,
    geo_uri,
    parse_position,
)
from solver.errors import InvalidInput

# Sample values used across the tables, with their sexagesimal forms.
DMS_LAT = 41 + 24 / 60 + 12.2 / 3600  # 41°24'12.2" by sexagesimal arithmetic
DMS_LON = 2 + 10 / 60 + 26.5 / 3600  # 2°10'26.5"
DM_LAT = 41 + 24.2028 / 60  # 41°24.2028'
DM_LON = 2 + 10.4418 / 60  # 2°10.4418'

ACCEPTED = [
    # text, expected lat, expected lon, source
    ("41.40338, 2.17403", 41.40338, 2.17403, "decimal degrees, common practice"),
    ("41.40338 2.17403", 41.40338, 2.17403, "decimal degrees, common practice"),
    ("41.40338,2.17403", 41.40338, 2.17403, "decimal degrees, common practice"),
    ("41.40338\u202f2.17403", 41.40338, 2.17403, "U+202F narrow no-break space, common practice"),
    ("(41.40338, 2.17403)", 41.40338, 2.17403, "pasted pair in parentheses, common practice"),
    ("-33.8688, 151.2093", -33.8688, 151.2093, "signed south latitude, common practice"),
    ("+41.4, -2.1", 41.4, -2.1, "explicit signs, common practice"),
    ("-33.8688,-151.2093", -33.8688, -151.2093, "signs after an unspaced comma, common practice"),
    ("\u221233.8688, 151.2093", -33.8688, 151.2093, "U+2212 minus sign, common practice"),
    ("41.40338N 2.17403E", 41.40338, 2.17403, "hemisphere letter after, common practice"),
    ("N41.40338 E2.17403", 41.40338, 2.17403, "hemisphere letter before, common practice"),
    ("41.40338° N, 2.17403° E", 41.40338, 2.17403, "degree sign, common practice"),
    ("41.40338°N,2.17403°E", 41.40338, 2.17403, "no spaces, common practice"),
    ("41.40338n 2.17403e", 41.40338, 2.17403, "lower-case letters, common practice"),
    ("41.40338° 2.17403°", 41.40338, 2.17403, "degree signs only, common practice"),
    ("33.8688S 151.2093W", -33.8688, -151.2093, "S and W are negative, common practice"),
    ("N 41.4 2.1 E", 41.4, 2.1, "letter before latitude, after longitude, common practice"),
    ("41.4N E2.1", 41.4, 2.1, "letter after latitude, before longitude, common practice"),
    ("41°24'12.2\"N 2°10'26.5\"E", DMS_LAT, DMS_LON, "d°m's\", sexagesimal arithmetic"),
    ("41°24′12.2″N 2°10′26.5″E", DMS_LAT, DMS_LON, "U+2032/U+2033 primes, arithmetic"),
    ("41°24'12.2''N 2°10'26.5''E", DMS_LAT, DMS_LON, "'' for seconds, arithmetic"),
    ("41º24’12.2”N 2º10’26.5”E", DMS_LAT, DMS_LON, "ordinal º and curly quotes, arithmetic"),
    ("41 24 12.2 N 2 10 26.5 E", DMS_LAT, DMS_LON, "unmarked d m s, arithmetic"),
    ("N 41 24 12.2 E 2 10 26.5", DMS_LAT, DMS_LON, "letter before d m s, arithmetic"),
    ("41 24 12.2N, 2 10 26.5E", DMS_LAT, DMS_LON, "comma and letters, arithmetic"),
    ("41°24'12.2\" 2°10'26.5\"", DMS_LAT, DMS_LON, "marks without letters, arithmetic"),
    ("41° 24' 12.2\" N, 2° 10' 26.5\" E", DMS_LAT, DMS_LON, "spaced marks, arithmetic"),
    (
        "33°52'7.68\"S 151°12'33.48\"E",
        -(33 + 52 / 60 + 7.68 / 3600),
        151 + 12 / 60 + 33.48 / 3600,
        "southern d°m's\", arithmetic",
    ),
    ("41 24.2028, 2 10.4418", DM_LAT, DM_LON, "unmarked d m.m, arithmetic (geopy misreads)"),
    ("N 41° 24.2028', E 2° 10.4418'", DM_LAT, DM_LON, "d° m.m' with letters, arithmetic"),
    ("41°24.2028'N 2°10.4418'E", DM_LAT, DM_LON, "d°m.m'H, arithmetic"),
    ("-41 24.2028, -2 10.4418", -DM_LAT, -DM_LON, "sign applies to the whole value, arithmetic"),
    ("41.40338, 2 10.4418", 41.40338, DM_LON, "decimal degrees beside d m.m, arithmetic"),
    ("-0, -0", 0.0, 0.0, 'RFC 5870 §3.4.2: "-0" is identical to "0"'),
    ("90, 180", 90.0, 180.0, "RFC 5870 §3.4.2: the range limits are included"),
    ("-90, -180", -90.0, -180.0, "RFC 5870 §3.4.2: the range limits are included"),
    ("geo:13.4125,103.8667", 13.4125, 103.8667, "RFC 5870 §1 example, from memory"),
    ("geo:48.2010,16.3695,183", 48.2010, 16.3695, "RFC 5870 §6.1 example, from memory"),
    (
        "geo:48.198634,16.371648;crs=wgs84;u=40",
        48.198634,
        16.371648,
        "RFC 5870 §6.2 example, from memory",
    ),
    ("geo:90,-22.43;crs=WGS84", 90.0, -22.43, "RFC 5870 §6.4 example (pole), from memory"),
    ("GEO:41.40338,2.17403", 41.40338, 2.17403, "RFC 3986 §3.1: schemes are case-insensitive"),
    ("geo:41.4,2.17;U=35", 41.4, 2.17, "RFC 5870 §3.3: parameter names case-insensitive"),
    ("geo:41.4,2.17;CRS=Wgs84;u=0", 41.4, 2.17, "RFC 5870 §3.3: crs value case-insensitive"),
    ("geo:41.4,2.17,-120;u=35.5", 41.4, 2.17, "RFC 5870 §3.3: altitude and fractional u"),
    ("geo:41.4,2.17;u=35;zoom-hint=x%20y", 41.4, 2.17, "RFC 5870 §3.3: other parameter"),
    ("geo:-0,-0", 0.0, 0.0, 'RFC 5870 §3.4.2: "-0" is identical to "0"'),
    ("  geo:41.4,2.17  ", 41.4, 2.17, "surrounding spaces of a paste are trimmed"),
]

REJECTED = [
    # text, fragment of the message, source or reason
    ("41,40338, 2,17403", "decimal commas; write 41.40338, 2.17403", "ambiguous decimal comma"),
    ("41,40338 2,17403", "decimal commas; write 41.40338 2.17403", "ambiguous decimal comma"),
    ("41°24'12,2\"N 2°10'26,5\"E", "write 41°24'12.2\"N 2°10'26.5\"E", "decimal comma in d m s"),
    ("41,2", "decimal commas", "one number 41.2 or two numbers 41 and 2"),
    ("-41.4 S, 2.1 E", "both a sign and the letter S", "a sign and a letter contradict"),
    ("41.4 N, -2.1 W", "both a sign and the letter W", "a sign and a letter contradict"),
    ("+41.4 N, 2.1 E", "both a sign and the letter N", "a sign and a letter together"),
    ("N-41.4 E2.1", "both a sign and the letter N", "a sign and a letter together"),
    ("41°-2°", "runs -2 into the value before it", "values run together"),
    ("2.17E 41.40N", "latitude comes first", "longitude letter on the first value"),
    ("41.4S 2.1N", "latitude comes first", "latitude letter on the second value"),
    ("41.4N, 2.1", "hemisphere letter on one value only", "half-lettered pair"),
    ("91, 0", "has latitude 91; expected -90..90", "RFC 5870 §3.4.2 range"),
    ("0, 181", "has longitude 181; expected -180..180", "RFC 5870 §3.4.2 range, no wrapping"),
    ("0, -180.5", "has longitude -180.5", "RFC 5870 §3.4.2 range, no wrapping"),
    ("90 30, 0", "has latitude 90.5", "RFC 5870 §3.4.2 range after d m"),
    ("41 60 0 N 2 0 0 E", "60 minutes", "sexagesimal: minutes are below 60"),
    ("41 0 60 N 2 0 0 E", "60 seconds", "sexagesimal: seconds are below 60"),
    ("41 75.5, 2", "75.5 minutes", "sexagesimal: minutes are below 60"),
    ("41 -5, 2", "signed minutes", "negative minutes"),
    ("41.5 24, 2", "decimals in 41.5 before the last part", "d.d m cannot be read one way"),
    ('12.2" 41, 2', "expected the order d° m' s\"", "marks out of order"),
    ("", "is empty", "empty text"),
    ("   ", "is empty", "blank text"),
    ("41.4", "one value only", "a single number"),
    ("41.4 2.1 120", "three numbers", "three numbers outside a geo: URI"),
    ("41.4, 2.1, 120", "more than two values", "three numbers outside a geo: URI"),
    ("41 24 2 10", "one way only", "2+2, 1+3 or 3+1 numbers"),
    ("41 24' 2 10'", "one way only", "no degree marks to cut at"),
    ("Harbour Bakery", "where a number", "letters"),
    ("41.4; 2.1", "';' where a number", "junk separator"),
    ("41.", "'.' where a number", "dangling decimal point"),
    ("41.4-2.1", "runs -2.1 into the value before it", "values run together"),
    ("\u0664\u0661, \u0662", "'\u0664' where a number", "digits other than ASCII 0-9"),
    ("[2.17403, 41.40338]", "GeoJSON [lon, lat]", "RFC 7946 §3.1.1 order is lon, lat"),
    ("nan, 2", "not a finite number", "NaN"),
    ("41.4, inf", "not a finite number", "infinity"),
    ("41.4 N N, 2 E", "stray 'N'", "repeated letter"),
    ("41.4 N 2.1 W 5", "in the middle of a value", "letter inside a value"),
    ("geo:41.4,2.1;crs=nad27", "only wgs84", "RFC 5870 §3.4.1: another CRS"),
    ("geo:41.4,2.1;u=-5", "u=-5; expected metres", "RFC 5870 §3.3 uval = pnum, §3.4.3"),
    ("geo:41.4,2.1;u=abc", "u=abc; expected metres", "RFC 5870 §3.3 uval = pnum"),
    ("geo:41.4,2.1;u=3;crs=wgs84", "crs after another", "RFC 5870 §3.3 p = [crsp] [uncp]"),
    ("geo:41.4,2.1;x=1;u=3", "u after a parameter", "RFC 5870 §3.3 p = [crsp] [uncp]"),
    ("geo:41.4,2.1;u=3;u=4", "repeats", "RFC 5870 §3.3: u at most once"),
    ("geo:41.4,2.1;a b", "malformed geo: URI parameter", "RFC 5870 §3.3 labeltext"),
    ("geo: 41.4,2.1", "space inside a geo: URI", "RFC 3986: no spaces in a URI"),
    ("geo:0,0?q=harbour", "query part", "not in RFC 5870 §3.3"),
    ("geo:41.4", "not an RFC 5870 geo: URI", "RFC 5870 §3.3: two coordinates at least"),
    ("geo:41,4,2,1", "not an RFC 5870 geo: URI", "RFC 5870 §3.3: at most three"),
    ("geo:41.4,+2.1", "not an RFC 5870 geo: URI", "RFC 5870 §3.3 num has no plus"),
    ("geo:91,0", "has latitude 91", "RFC 5870 §3.4.2 range"),
    ("geo:0,180.000001", "has longitude 180.000001", "RFC 5870 §3.4.2 range"),
]


@pytest.mark.parametrize(("text", "lat", "lon", "source"), ACCEPTED, ids=[r[0] for r in ACCEPTED])
def test_accepted_forms(text, lat, lon, source):
    position = parse_position(text)
    assert position.lat == pytest.approx(lat, abs=1e-12), source
    assert position.lon == pytest.approx(lon, abs=1e-12), source


@pytest.mark.parametrize(("text", "fragment", "reason"), REJECTED, ids=[r[0] for r in REJECTED])
def test_rejected_forms_name_the_text_and_the_expectation(text, fragment, reason):
    with pytest.raises(InvalidInput) as caught:
        parse_position(text, field="stop 'Harbour Bakery'")
    message = str(caught.value)
    assert fragment in message, reason
    assert message.startswith(f"stop 'Harbour Bakery' '{text}' "), message
    assert caught.value.field == "stop 'Harbour Bakery'"
    assert caught.value.value == text


@pytest.mark.parametrize("value", [None, 41.4, b"41.4, 2.1", ("41.4", "2.1")])
def test_parse_position_refuses_non_text(value):
    with pytest.raises(InvalidInput, match="expected text"):
        parse_position(value)


MARKED_DMS = [
    # Forms geopy reads (full marks, upper-case letters): an independent second reader.
    "41°24'12.2\"N 2°10'26.5\"E",
    "33°52'7.68\"S 151°12'33.48\"E",
    "41°24.2028'N 2°10.4418'E",
    "N 41° 24.2028', E 2° 10.4418'",
    "89°59'59.999\"S 179°59'59.9\"W",
]


@pytest.mark.parametrize("text", MARKED_DMS)
def test_marked_forms_agree_with_geopy(text):
    reference = GeopyPoint(text)
    position = parse_position(text)
    assert position.lat == pytest.approx(reference.latitude, abs=1e-12)
    assert position.lon == pytest.approx(reference.longitude, abs=1e-12)


_seconds = st.decimals(0, "59.999", places=3).map(lambda seconds: f"{seconds:.3f}")
_dms = st.tuples(
    st.integers(0, 89),
    st.integers(0, 59),
    _seconds,
    st.sampled_from("NS"),
    st.integers(0, 179),
    st.integers(0, 59),
    _seconds,
    st.sampled_from("EW"),
)


def _sexagesimal(degrees, minutes, seconds, letter):
    value = degrees + minutes / 60 + float(seconds) / 3600
    return -value if letter in "SW" else value


@given(_dms)
def test_random_marked_dms_agrees_with_geopy_and_arithmetic(parts):
    lat_d, lat_m, lat_s, ns, lon_d, lon_m, lon_s, ew = parts
    text = f"{lat_d}°{lat_m}'{lat_s}\"{ns} {lon_d}°{lon_m}'{lon_s}\"{ew}"
    position = parse_position(text)
    reference = GeopyPoint(text)
    assert position.lat == pytest.approx(reference.latitude, abs=1e-9)
    assert position.lon == pytest.approx(reference.longitude, abs=1e-9)
    assert position.lat == pytest.approx(_sexagesimal(lat_d, lat_m, lat_s, ns), abs=1e-12)
    assert position.lon == pytest.approx(_sexagesimal(lon_d, lon_m, lon_s, ew), abs=1e-12)


LAYOUTS = [
    lambda d, m, s, h: f"{d} {m} {s} {h}",  # 41 24 12.2 N
    lambda d, m, s, h: f"{h} {d} {m} {s}",  # N 41 24 12.2
    lambda d, m, s, h: f"{d}°{m}′{s}″{h.lower()}",  # 41°24′12.2″n
    lambda d, m, s, h: f"{h}{d}º {m}’ {s}”",  # N41º 24’ 12.2”
]


@given(_dms, st.sampled_from(LAYOUTS), st.sampled_from([" ", ", ", ","]))
def test_random_dms_layouts_match_arithmetic(parts, layout, separator):
    lat_d, lat_m, lat_s, ns, lon_d, lon_m, lon_s, ew = parts
    text = layout(lat_d, lat_m, lat_s, ns) + separator + layout(lon_d, lon_m, lon_s, ew)
    position = parse_position(text)
    assert position.lat == pytest.approx(_sexagesimal(lat_d, lat_m, lat_s, ns), abs=1e-12)
    assert position.lon == pytest.approx(_sexagesimal(lon_d, lon_m, lon_s, ew), abs=1e-12)


positions = st.builds(
    Position,
    st.floats(-90, 90, allow_nan=False, allow_infinity=False),
    st.floats(-180, 180, allow_nan=False, allow_infinity=False),
)


@given(positions)
def test_format_then_parse_round_trips_within_the_last_digit(position):
    back = parse_position(format_position(position, digits=7))
    assert abs(back.lat - position.lat) <= 1e-7
    assert abs(back.lon - position.lon) <= 1e-7


@given(positions, st.sampled_from([",", ", ", " ", " , ", "\t"]), st.booleans())
def test_decimal_degrees_read_back_with_any_separator(position, separator, parenthesised):
    text = f"{position.lat:.7f}{separator}{position.lon:.7f}"
    back = parse_position(f"({text})" if parenthesised else text)
    assert abs(back.lat - position.lat) <= 1e-7
    assert abs(back.lon - position.lon) <= 1e-7


@given(positions)
def test_decimal_comma_versions_of_formatted_text_are_refused(position):
    with_commas = format_position(position, digits=4).replace(".", ",")
    with pytest.raises(InvalidInput, match="decimal commas"):
        parse_position(with_commas)


@given(positions)
def test_swapped_hemisphere_letters_are_refused(position):
    lat, lon = abs(position.lat), abs(position.lon)
    with pytest.raises(InvalidInput, match="latitude comes first"):
        parse_position(f"{lon:.5f}E {lat:.5f}N")


# RFC 5870 §3.3, written out from the ABNF (not from the module under test):
#   geo-URI = "geo:" coordinates p ; coordinates = num "," num [ "," num ]
#   p = [ ";crs=" crslabel ] [ ";u=" pnum ] *( ";" labeltext [ "=" 1*paramchar ] )
# and, in the default WGS-84 CRS (§3.4.2), latitude = [ "-" ] 1*2DIGIT [ "." 1*DIGIT ],
# longitude = [ "-" ] 1*3DIGIT [ "." 1*DIGIT ].
_PNUM = r"[0-9]+(?:\.[0-9]+)?"
_LABEL = r"[A-Za-z0-9-]+"
_PARAMCHAR = r"(?:[\[\]:&+$]|[A-Za-z0-9\-_.!~*'()]|%[0-9A-Fa-f]{2})"
GEO_URI_WGS84 = re.compile(
    r"geo:-?[0-9]{1,2}(?:\.[0-9]+)?,-?[0-9]{1,3}(?:\.[0-9]+)?(?:,-?" + _PNUM + ")?"
    rf"(?:;crs=(?:wgs84|{_LABEL}))?(?:;u={_PNUM})?(?:;{_LABEL}(?:={_PARAMCHAR}+)?)*"
)


@pytest.mark.parametrize(
    "uri",
    [
        "geo:13.4125,103.8667",  # RFC 5870 §1, from memory
        "geo:48.2010,16.3695,183",  # RFC 5870 §6.1, from memory
        "geo:48.198634,16.371648;crs=wgs84;u=40",  # RFC 5870 §6.2, from memory
    ],
)
def test_the_abnf_regex_itself_accepts_the_rfc_examples(uri):
    assert GEO_URI_WGS84.fullmatch(uri)


@given(positions, st.integers(0, 9))
def test_geo_uri_matches_rfc5870_abnf_and_reads_back(position, digits):
    uri = geo_uri(position, digits=digits)
    assert GEO_URI_WGS84.fullmatch(uri), uri
    back = parse_position(uri)
    assert abs(back.lat - position.lat) <= 0.5 * 10.0**-digits + 1e-12
    assert abs(back.lon - position.lon) <= 0.5 * 10.0**-digits + 1e-12


@pytest.mark.parametrize(
    ("position", "digits", "uri"),
    [
        (Position(41.40338, 2.17403), 6, "geo:41.40338,2.17403"),  # trailing zeros dropped
        (Position(48.2010, 16.3695), 6, "geo:48.201,16.3695"),  # RFC 5870 §6.1 less altitude
        (Position(90.0, -22.43), 6, "geo:90,-22.43"),  # RFC 5870 §6.4, from memory
        (Position(-0.0000001, 0.0), 6, "geo:0,0"),  # RFC 5870 §3.4.2 "-0" is "0"; no minus
        (Position(-33.86881, 151.20929), 2, "geo:-33.87,151.21"),  # rounding, common practice
    ],
)
def test_geo_uri_examples(position, digits, uri):
    assert geo_uri(position, digits=digits) == uri


@pytest.mark.parametrize(
    ("position", "digits", "text"),
    [
        (Position(41.40338, 2.17403), 5, "41.40338, 2.17403"),
        (Position(-33.8688, 151.2093), 5, "-33.86880, 151.20930"),
        (Position(-0.000001, -0.0), 5, "0.00000, 0.00000"),  # no "-0.00000"
        (Position(12.5, -7.25), 0, "12, -7"),  # round-half-even of Python's format
    ],
)
def test_format_position_examples(position, digits, text):
    assert format_position(position, digits=digits) == text


@pytest.mark.parametrize("digits", [-1, 16, 2.0, True, "5"])
@pytest.mark.parametrize("writer", [format_position, geo_uri])
def test_writers_refuse_bad_digits(writer, digits):
    with pytest.raises(InvalidInput, match="digits") as caught:
        writer(Position(1.0, 2.0), digits=digits)
    assert caught.value.field == "digits"


@pytest.mark.parametrize(
    ("lat", "lon"),
    [(41, 2), (41.40338, 2.17403), (Fraction(1, 3), -180), (np.float64(-90.0), np.int64(180))],
)
def test_check_position_accepts_real_numbers(lat, lon):
    position = check_position(lat, lon)
    assert (position.lat, position.lon) == (float(lat), float(lon))
    assert type(position.lat) is float and type(position.lon) is float


@pytest.mark.parametrize(
    ("lat", "lon", "fragment"),
    [
        (True, 2.0, "latitude True of type bool"),
        (41.0, False, "longitude False of type bool"),
        (math.nan, 2.0, "latitude nan"),
        (41.0, math.inf, "longitude inf"),
        (-math.inf, 2.0, "latitude -inf"),
        ("41.4", 2.0, "latitude '41.4' of type str"),
        (None, 2.0, "latitude None of type NoneType"),
        (123.4, 2.0, "latitude 123.4; expected a finite number of degrees in -90..90"),
        (41.0, -180.5, "longitude -180.5; expected a finite number of degrees in -180..180"),
        (41.0, 360.0, "longitude 360.0"),  # no silent wrapping
        (10**400, 2.0, "latitude of type int too large for a float"),
    ],
)
def test_check_position_refuses_with_field_and_value(lat, lon, fragment):
    with pytest.raises(InvalidInput) as caught:
        check_position(lat, lon, field="stop 'Harbour Bakery'")
    assert str(caught.value).startswith("stop 'Harbour Bakery' has ")
    assert fragment in str(caught.value)
    assert caught.value.field == "stop 'Harbour Bakery'"
    assert caught.value.value is (lat if "latitude" in fragment else lon)


def test_position_validates_itself_and_is_frozen():
    with pytest.raises(InvalidInput, match="latitude 95.0"):
        Position(95.0, 0.0)
    with pytest.raises(InvalidInput, match="longitude nan"):
        Position(0.0, math.nan)
    position = Position(-0.0, -0.0)
    assert math.copysign(1.0, position.lat) == 1.0 and math.copysign(1.0, position.lon) == 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        position.lat = 1.0  # type: ignore[misc]


def test_invalid_input_is_a_value_error():
    with pytest.raises(ValueError):
        parse_position("41,40338, 2,17403")
