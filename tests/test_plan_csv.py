"""CSV export, read back with Python's csv module.

Sources named beside the checks:
- RFC 4180 (Shafranovich, 2005), Common Format and MIME Type for CSV Files: §2 rules 1-2
  (records end in CRLF), 3 (an optional header line), 6-7 (fields holding commas, quotes or
  line breaks are quoted; quotes doubled). Rule numbers from memory of the RFC.
- The Unicode Standard, §23.8 (U+FEFF as a UTF-8 byte-order mark, EF BB BF) and Python's
  "utf-8-sig" codec that strips it; that Excel needs the mark to read UTF-8 is common
  practice, no source.
- OWASP, "CSV Injection": cells starting with = + - @ tab or CR are run as formulas.
- RFC 5870 §3.3 geo: URI ABNF (the regular expression is shared with the iCalendar tests).
"""

from __future__ import annotations

import csv
import dataclasses
import io
from datetime import date

import pytest

from solver.clock import parse_clock
from solver.coordinates import Position
from solver.errors import InvalidInput
from solver.export_stops import export_day
from solver.plan_csv import CSV_COLUMNS, plan_csv, plan_csv_text
from tests.test_ical_export import GEO_URI_RFC5870, POSITIONS, TRICKY, hand_plan

HEADER = ["order", "client", "arrive", "start", "depart", "wait_min", "leg_km", "leg_min",
          "lat", "lon", "geo_uri"]  # the column order the project asked for


def sample():
    plan = hand_plan([
        (1, TRICKY, 500.0, 540.0, 600.0, 12.34, 20.0),
        (2, 'Quote "Eck" GmbH', 615.0, 615.0, 660.0, 8.0, 15.0),
        (3, "=HYPERLINK(\"x\")", 680.0, 690.0, 735.0, 9.5, 20.0),
    ], back_km=5.25, back_min=10.0)
    return plan, export_day(date(2026, 10, 22), plan, positions=POSITIONS)


def read_back(data: bytes) -> list[list[str]]:
    return list(csv.reader(io.StringIO(data.decode("utf-8-sig"), newline="")))


def test_bytes_are_utf8_with_bom_and_crlf_records():
    _, day = sample()
    data = plan_csv(day)
    assert data.startswith(b"\xef\xbb\xbf")  # Unicode §23.8: UTF-8 byte-order mark
    assert data.endswith(b"\r\n")  # RFC 4180 §2 rule 1-2
    assert data.decode("utf-8-sig") == plan_csv_text(day)
    text = plan_csv_text(day)
    assert text.count("\r\n") == 1 + 5  # header, home, three visits, home
    assert text.count("\n") == text.count("\r\n") + 1  # the one bare LF is inside a quoted name


def test_header_and_rows_in_order_with_home_first_and_last():
    plan, day = sample()
    rows = read_back(plan_csv(day))
    assert rows[0] == HEADER == list(CSV_COLUMNS)  # RFC 4180 §2 rule 3
    body = [dict(zip(HEADER, row, strict=True)) for row in rows[1:]]
    assert [r["order"] for r in body] == ["0", "1", "2", "3", "4"]
    assert body[0]["client"] == body[-1]["client"] == "Home"
    assert [r["client"] for r in body[1:-1]] == [TRICKY, 'Quote "Eck" GmbH',
                                                 "'=HYPERLINK(\"x\")"]
    assert (body[0]["arrive"], body[0]["depart"]) == ("", "08:00")
    assert (body[-1]["arrive"], body[-1]["depart"]) == ("12:25", "")


def test_numbers_parse_and_match_the_plan():
    plan, day = sample()
    body = [dict(zip(HEADER, row, strict=True)) for row in read_back(plan_csv(day))[1:]]
    for row, visit in zip(body[1:-1], plan.visits, strict=True):
        assert parse_clock(row["arrive"]) == round(visit.arrive_min)
        assert parse_clock(row["start"]) == round(visit.start_min)
        assert parse_clock(row["depart"]) == round(visit.depart_min)
        assert float(row["wait_min"]) == round(visit.wait_min)
        assert float(row["leg_km"]) == pytest.approx(visit.leg_km, abs=0.005)
        assert float(row["leg_min"]) == round(visit.leg_min)
        assert float(row["lat"]) == pytest.approx(POSITIONS[visit.node].lat, abs=5e-7)
        assert float(row["lon"]) == pytest.approx(POSITIONS[visit.node].lon, abs=5e-7)
    assert float(body[-1]["leg_km"]) == pytest.approx(5.25)
    total = sum(float(r["leg_km"]) for r in body if r["leg_km"])
    assert total == pytest.approx(plan.total_km, abs=0.005 * len(body))


def test_geo_uris_follow_rfc_5870():
    _, day = sample()
    rows = read_back(plan_csv(day))[1:]
    for row in rows:
        assert GEO_URI_RFC5870.fullmatch(row[-1]), row[-1]  # RFC 5870 §3.3
    assert rows[0][-1] == "geo:48.20849,16.37208"


def test_negative_coordinates_and_formula_guard():
    plan = hand_plan([(1, "-Minus Markt", 500.0, 540.0, 600.0, 1.0, 2.0),
                      (2, "+Plus", 610.0, 610.0, 620.0, 1.0, 2.0),
                      (3, "@Home office", 630.0, 630.0, 640.0, 1.0, 2.0)])
    positions = {**POSITIONS, 1: Position(-33.8688, -151.2093)}
    rows = read_back(plan_csv(export_day(date(2026, 10, 22), plan, positions=positions)))
    assert [r[1] for r in rows[2:5]] == ["'-Minus Markt", "'+Plus", "'@Home office"]  # OWASP
    assert (float(rows[2][8]), float(rows[2][9])) == (-33.8688, -151.2093)
    assert rows[2][10] == "geo:-33.8688,-151.2093"


def test_not_a_day_is_refused():
    plan, _ = sample()
    with pytest.raises(InvalidInput) as caught:
        plan_csv(plan)
    assert caught.value.field == "day"


def test_replan_from_the_road_starts_where_the_rep_stands():
    plan = hand_plan([(3, "Kunde Drei", 700.0, 700.0, 745.0, 4.0, 10.0)])
    plan = dataclasses.replace(plan, start_node=2, start_min=690.0)
    day = export_day(date(2026, 10, 22), plan, positions=POSITIONS, start_name="Bäckerei Süd")
    rows = read_back(plan_csv(day))[1:]
    assert [r[1] for r in rows] == ["Bäckerei Süd", "Kunde Drei", "Home"]
    assert (float(rows[0][8]), float(rows[0][9])) == (POSITIONS[2].lat, POSITIONS[2].lon)
    assert rows[0][4] == "11:30" and rows[-1][10] == "geo:48.20849,16.37208"
