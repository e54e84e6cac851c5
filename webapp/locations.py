"""Positions as the rep gives them: pasted text in any form the solver reads, or lat/lon."""

from __future__ import annotations

from solver.coordinates import Position, check_position, format_position, geo_uri, parse_position

from .fields import SKIP, Checker

__all__ = ["read_location", "position_json"]


def read_location(check: Checker, field: str, value) -> Position | None:
    """Text goes to the solver's parser; an object must be exactly {"lat": .., "lon": ..}."""
    if isinstance(value, str):
        pos = check.run(field, parse_position, value, field=field)
    elif isinstance(value, dict) and set(value) == {"lat", "lon"}:
        pos = check.run(field, check_position, value["lat"], value["lon"], field=field)
    else:
        check.fail(field, f"{field} must be text such as '41.40338, 2.17403' or an object "
                   '{"lat": .., "lon": ..}', repr(value)[:80])
        return None
    return None if pos is SKIP else pos


def position_json(lat: float, lon: float) -> dict:
    """A stored position with the texts the page shows and links to."""
    pos = Position(lat, lon)
    return {"lat": pos.lat, "lon": pos.lon, "text": format_position(pos), "geo_uri": geo_uri(pos)}
