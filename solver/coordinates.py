"""Strict reading and writing of the positions a rep types or pastes.

Latitude comes first, always: every function here takes and returns (lat, lon) in decimal
degrees on WGS-84.  Text that could be read more than one way is refused with a message that
quotes it and says what to write instead; nothing is guessed, swapped or wrapped silently.
"""

from __future__ import annotations

import math
import numbers
import re
from dataclasses import dataclass

from solver.errors import InvalidInput

__all__ = ["Position", "parse_position", "format_position", "geo_uri", "check_position"]

LATITUDE_LIMIT_DEG = 90.0  # WGS-84 latitude range, RFC 5870 §3.4.2
LONGITUDE_LIMIT_DEG = 180.0  # WGS-84 longitude range, RFC 5870 §3.4.2
MINUTES_PER_DEGREE = 60.0  # sexagesimal degrees, common practice
SECONDS_PER_DEGREE = 3600.0  # sexagesimal degrees, common practice
MAX_DIGITS = 15  # float64 keeps 15 significant decimal digits (IEEE 754 binary64)

_EXAMPLE = "41.40338, 2.17403"
_AXES = {"latitude": (LATITUDE_LIMIT_DEG, "NS"), "longitude": (LONGITUDE_LIMIT_DEG, "EW")}
_MARKS = ("°", "'", '"')  # degrees, minutes, seconds: the only order they may come in
# Look-alikes that phones and word processors put in place of the plain marks.
_LOOKALIKES = str.maketrans(
    {"º": "°", "˚": "°", "′": "'", "’": "'", "″": '"', "”": '"', "−": "-", "\u00a0": " "}
)
_TOKEN = re.compile(
    r"(?P<space>\s+)|(?P<number>[+-]?[0-9]+(?:\.[0-9]+)?)|(?P<mark>[°'\"])"
    r"|(?P<hemisphere>[NSEWnsew])|(?P<comma>,)"
)
_DIGIT_RUN = re.compile(r"[0-9]+(?:[.,][0-9]+)+")
_NOT_FINITE = re.compile(r"\b[+-]?(?:nan|inf(?:inity)?)\b", re.IGNORECASE)
# RFC 5870 §3.3: num = [ "-" ] pnum ; pnum = 1*DIGIT [ "." 1*DIGIT ]
_GEO_NUM = r"-?[0-9]+(?:\.[0-9]+)?"
_GEO_URI = re.compile(
    rf"geo:(?P<lat>{_GEO_NUM}),(?P<lon>{_GEO_NUM})(?:,{_GEO_NUM})?(?P<params>(?:;[^;]*)*)",
    re.IGNORECASE,
)
_GEO_LABEL = re.compile(r"[A-Za-z0-9-]+")  # labeltext
_GEO_PVALUE = re.compile(r"(?:[][:&+$A-Za-z0-9_.!~*'()-]|%[0-9A-Fa-f]{2})+")  # 1*paramchar
_GEO_PNUM = re.compile(r"[0-9]+(?:\.[0-9]+)?")


class _Unreadable(Exception):
    """Why a text is refused; parse_position adds the field and the quoted text."""


@dataclass(frozen=True)
class Position:
    """A point on WGS-84 in decimal degrees; a Position that exists is finite and in range.

    ``lat`` is in -90..90 and ``lon`` in -180..180, both stored as float, with -0.0 stored as
    0.0 (RFC 5870 §3.4.2 makes "-0" identical to "0").
    """

    lat: float
    lon: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "lat", _degrees(self.lat, axis="latitude", field="position"))
        object.__setattr__(self, "lon", _degrees(self.lon, axis="longitude", field="position"))


def check_position(lat: object, lon: object, *, field: str = "location") -> Position:
    """Validate latitude and longitude given as separate numbers (from JSON, CSV cells...).

    Guarantees a Position or an InvalidInput naming ``field`` and the offending value; bools,
    strings, NaN, infinities and out-of-range values are refused, never coerced or wrapped.
    """
    return Position(
        _degrees(lat, axis="latitude", field=field), _degrees(lon, axis="longitude", field=field)
    )


def parse_position(text: str, *, field: str = "location") -> Position:
    """Read a typed or pasted location, latitude first, into a Position.

    Accepts decimal degrees, degrees-minutes-seconds and degrees-decimal-minutes (with a sign
    or an N/S/E/W letter, marks optional) and RFC 5870 geo: URIs; sexagesimal values are
    converted by deg + min/60 + sec/3600.  Text that cannot be read one way only raises
    InvalidInput quoting it and saying what was expected.
    """
    if not isinstance(text, str):
        raise InvalidInput(
            f"{field} {text!r} is a {type(text).__name__}; expected text such as {_EXAMPLE}",
            field=field,
            value=text,
        )
    stripped = text.strip()
    try:
        if not stripped:
            raise _Unreadable(f"is empty; expected latitude and longitude such as {_EXAMPLE}")
        if stripped[:4].lower() == "geo:":
            lat, lon = _read_geo_uri(stripped)
        else:
            lat, lon = _read_free_text(stripped)
        for axis, value in (("latitude", lat), ("longitude", lon)):
            limit = _AXES[axis][0]
            if not -limit <= value <= limit:
                raise _Unreadable(f"has {axis} {value:.10g}; expected -{limit:g}..{limit:g}")
    except _Unreadable as why:
        raise InvalidInput(f"{field} '{text}' {why}", field=field, value=text) from None
    return Position(lat, lon)


def format_position(position: Position, *, digits: int = 5) -> str:
    """Write ``position`` as "lat, lon" in decimal degrees with exactly ``digits`` decimals.

    parse_position reads the result back to within half a unit in the last decimal place.
    """
    _check_digits(digits)
    return f"{_fixed(position.lat, digits)}, {_fixed(position.lon, digits)}"


def geo_uri(position: Position, *, digits: int = 6) -> str:
    """Write ``position`` as an RFC 5870 geo: URI such as "geo:41.40338,2.17403".

    Coordinates are rounded to at most ``digits`` decimals with trailing zeros dropped; the
    result matches the ``geo-URI`` rule of RFC 5870 §3.3 in the default WGS-84 CRS.
    """
    _check_digits(digits)
    return f"geo:{_compact(position.lat, digits)},{_compact(position.lon, digits)}"


def _degrees(value: object, *, axis: str, field: str) -> float:
    limit = _AXES[axis][0]
    expected = f"expected a finite number of degrees in -{limit:g}..{limit:g}"
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise InvalidInput(
            f"{field} has {axis} {value!r} of type {type(value).__name__}; {expected}",
            field=field,
            value=value,
        )
    try:
        degrees = float(value)
    except OverflowError:
        raise InvalidInput(
            f"{field} has {axis} of type {type(value).__name__} too large for a float; {expected}",
            field=field,
            value=value,
        ) from None
    if not math.isfinite(degrees) or not -limit <= degrees <= limit:
        raise InvalidInput(f"{field} has {axis} {degrees!r}; {expected}", field=field, value=value)
    return degrees + 0.0  # turns -0.0 into 0.0


def _check_digits(digits: object) -> None:
    if isinstance(digits, bool) or not isinstance(digits, int) or not 0 <= digits <= MAX_DIGITS:
        raise InvalidInput(
            f"digits {digits!r} is not a whole number in 0..{MAX_DIGITS}",
            field="digits",
            value=digits,
        )


def _fixed(value: float, digits: int) -> str:
    written = f"{value:.{digits}f}"
    # A value that rounds to zero must not print as "-0.000".
    return written[1:] if written.startswith("-") and not written.strip("-0.") else written


def _compact(value: float, digits: int) -> str:
    written = _fixed(value, digits)
    return written.rstrip("0").rstrip(".") if "." in written else written


def _read_geo_uri(uri: str) -> tuple[float, float]:
    """RFC 5870 §3.3 syntax; crs must be wgs84 (§3.4.1), u a number of metres (§3.4.3)."""
    match = _GEO_URI.fullmatch(uri)
    if match is None:
        if any(char.isspace() for char in uri):
            raise _Unreadable("has a space inside a geo: URI; write e.g. geo:41.40338,2.17403")
        if "?" in uri:
            raise _Unreadable("has a query part (?...) that RFC 5870 does not define")
        raise _Unreadable("is not an RFC 5870 geo: URI; expected e.g. geo:41.40338,2.17403")
    seen: list[str] = []
    for param in match["params"].split(";")[1:]:
        name, has_value, value = param.partition("=")
        key = name.lower()
        if not _GEO_LABEL.fullmatch(name) or (has_value and not _GEO_PVALUE.fullmatch(value)):
            raise _Unreadable(f"has a malformed geo: URI parameter ';{param}'")
        if key in seen:
            raise _Unreadable(f"repeats the geo: URI parameter '{name}'")
        if key == "crs" and seen:
            raise _Unreadable("gives crs after another parameter; RFC 5870 puts it first")
        if key == "crs" and value.lower() != "wgs84":
            raise _Unreadable(f"uses crs={value}; only wgs84 coordinates can be read")
        if key == "u" and seen not in ([], ["crs"]):
            raise _Unreadable("gives u after a parameter other than crs; RFC 5870 puts it first")
        if key == "u" and not _GEO_PNUM.fullmatch(value):
            raise _Unreadable(f"has uncertainty u={value}; expected metres as a number >= 0")
        seen.append(key)
    return float(match["lat"]), float(match["lon"])


def _read_free_text(stripped: str) -> tuple[float, float]:
    plain = stripped.translate(_LOOKALIKES).replace("''", '"')
    if plain.startswith("(") and plain.endswith(")"):
        plain = plain[1:-1].strip()
    if plain.startswith("["):
        raise _Unreadable("looks like a GeoJSON [lon, lat] pair; write latitude first, no [ ]")
    if _NOT_FINITE.search(plain):
        raise _Unreadable(f"is not a finite number; expected e.g. {_EXAMPLE}")
    if any("," in run and "." not in run for run in _DIGIT_RUN.findall(plain)):
        raise _Unreadable(f"uses decimal commas; {_decimal_comma_hint(plain)}")
    first, second = _halves(_tokens(plain))
    lat, lat_letter = _read_value(first, axis="latitude")
    lon, lon_letter = _read_value(second, axis="longitude")
    if lat_letter != lon_letter:
        raise _Unreadable("has a hemisphere letter on one value only; give N/S and E/W or neither")
    return lat, lon


def _decimal_comma_hint(plain: str) -> str:
    dotted = re.sub(r"([0-9]),([0-9])", r"\1.\2", plain)
    try:
        _read_free_text(dotted)
    except _Unreadable:
        return f"write decimals with dots and ', ' between latitude and longitude: {_EXAMPLE}"
    return f"write {dotted}"


def _tokens(plain: str) -> list[tuple[str, str]]:
    tokens: list[tuple[str, str]] = []
    position = 0
    while position < len(plain):
        match = _TOKEN.match(plain, position)
        if match is None:
            char = plain[position]
            raise _Unreadable(f"has {char!r} where a number, ° ' \", N/S/E/W or a comma belongs")
        kind, word = match.lastgroup or "", match.group()
        if kind == "number" and word[0] in "+-" and tokens and tokens[-1][0] in ("number", "mark"):
            raise _Unreadable(f"runs {word} into the value before it; expected e.g. {_EXAMPLE}")
        tokens.append((kind, word))
        position = match.end()
    return [token for token in tokens if token[0] != "space"]


def _halves(tokens: list) -> tuple[list, list]:
    """Cut the tokens into latitude and longitude where the text itself marks the cut."""
    commas = [i for i, (kind, _) in enumerate(tokens) if kind == "comma"]
    if len(commas) > 1:
        raise _Unreadable("has more than two values; an altitude is read only from a geo: URI")
    if commas:
        return tokens[: commas[0]], tokens[commas[0] + 1 :]
    letters = [i for i, (kind, _) in enumerate(tokens) if kind == "hemisphere"]
    if len(letters) == 1:
        raise _Unreadable("has a hemisphere letter on one value only; give N/S and E/W or neither")
    if len(letters) > 2:
        raise _Unreadable("has more than two hemisphere letters")
    if letters:
        i, j = letters
        if i == 0 and j == len(tokens) - 1:  # "N 41 2 E": the letters do not mark the cut
            inner_first, inner_second = _halves_by_marks(tokens[1:-1])
            return tokens[:1] + inner_first, inner_second + tokens[-1:]
        if i == 0 or j == i + 1:  # "N41 E2" or "41N E2"
            return tokens[:j], tokens[j:]
        if j == len(tokens) - 1:  # "41N 2E"
            return tokens[: i + 1], tokens[i + 1 :]
        raise _Unreadable("has a hemisphere letter in the middle of a value")
    return _halves_by_marks(tokens)


def _halves_by_marks(tokens: list) -> tuple[list, list]:
    numbers_at = [i for i, (kind, _) in enumerate(tokens) if kind == "number"]
    marks = [word for kind, word in tokens if kind == "mark"]
    if len(numbers_at) == 2 and set(marks) <= {"°"} and len(marks) != 1:
        return tokens[: numbers_at[1]], tokens[numbers_at[1] :]
    degree_marks = [i for i, token in enumerate(tokens) if token == ("mark", "°")]
    if len(degree_marks) == 2 and tokens[degree_marks[1] - 1][0] == "number":
        return tokens[: degree_marks[1] - 1], tokens[degree_marks[1] - 1 :]
    if len(numbers_at) < 2:
        raise _Unreadable(f"has one value only; expected latitude and longitude: {_EXAMPLE}")
    if len(numbers_at) == 3 and not marks:
        raise _Unreadable("has three numbers; an altitude is read only from a geo: URI")
    raise _Unreadable(
        "cannot be split into latitude and longitude one way only; "
        "put a comma between them, e.g. 41 24.2028, 2 10.4418"
    )


def _read_value(tokens: list, *, axis: str) -> tuple[float, bool]:
    """One coordinate: [letter] degrees [minutes [seconds]] [letter], marks optional."""
    letter = ""
    if tokens and tokens[0][0] == "hemisphere":
        letter, tokens = tokens[0][1].upper(), tokens[1:]
    if tokens and tokens[-1][0] == "hemisphere":
        if letter:
            raise _Unreadable(f"gives two hemisphere letters for the {axis}")
        letter, tokens = tokens[-1][1].upper(), tokens[:-1]
    if letter and letter not in _AXES[axis][1]:
        raise _Unreadable(f"puts {letter} on the {axis}; latitude comes first (N/S), then E/W")
    parts: list[list[str]] = []
    for kind, word in tokens:
        if kind == "number":
            parts.append([word, ""])
        elif kind == "mark" and parts and not parts[-1][1]:
            parts[-1][1] = word
        else:
            raise _Unreadable(f"has a stray {word!r} in the {axis}")
    if not parts:
        raise _Unreadable(f"has no number for the {axis}; expected e.g. {_EXAMPLE}")
    if len(parts) > len(_MARKS):
        raise _Unreadable(f"has {len(parts)} numbers in the {axis}; expected at most d m s")
    for index, (word, mark) in enumerate(parts):
        if mark and mark != _MARKS[index]:
            raise _Unreadable(f"has {word}{mark} in the {axis}; expected the order d° m' s\"")
        if index and word[0] in "+-":
            raise _Unreadable(f"has signed minutes or seconds {word} in the {axis}")
        if index < len(parts) - 1 and "." in word:
            raise _Unreadable(f"has decimals in {word} before the last part of the {axis}")
    if letter and parts[0][0][0] in "+-":
        raise _Unreadable(f"gives the {axis} both a sign and the letter {letter}; use one")
    degrees = abs(float(parts[0][0]))
    for (word, _), unit, per_degree in zip(
        parts[1:], ("minutes", "seconds"), (MINUTES_PER_DEGREE, SECONDS_PER_DEGREE), strict=False
    ):
        if float(word) >= MINUTES_PER_DEGREE:
            raise _Unreadable(f"has {word} {unit} in the {axis}; expected less than 60")
        degrees += float(word) / per_degree
    negative = parts[0][0].startswith("-") or letter in ("S", "W")
    return (-degrees if negative else degrees), bool(letter)
