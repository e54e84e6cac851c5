"""The client book over the API: add, read, change, deactivate, search, CSV in and out."""

from __future__ import annotations

import csv
import io

import pytest

from .helpers import add_client, dump

ALL_WEEK = {"mon": "", "tue": "", "wed": "", "thu": "", "fri": "", "sat": "", "sun": ""}


def test_add_and_read_back_a_client(client):
    made = add_client(client, "Serres Test", "47.40000, 0.66700", visit_min=40,
                      windows={"mon": "09:00-12:00, 14:00-17:30", "sun": "closed"},
                      notes="gate code 12")
    assert made["location"]["lat"] == 47.4 and made["location"]["lon"] == 0.667
    assert made["windows"] == ALL_WEEK | {"mon": "09:00-12:00, 14:00-17:30", "sun": "closed"}
    assert made["active"] is True and made["notes"] == "gate code 12"
    assert client.get(f"/api/clients/{made['id']}").json == made


# Accepted location forms with the value they must give (lat, lon).
LOCATIONS = [
    # RFC 5870 §1 example geo URI (from memory of the RFC text)
    ("geo:13.4125,103.8667", (13.4125, 103.8667)),
    ("geo:47.39,0.69;u=25", (47.39, 0.69)),  # RFC 5870 §3.4.3 uncertainty parameter
    # sexagesimal: d + m/60 + s/3600 (common practice)
    ("47°23'30\"N 0°41'20\"E", (47 + 23 / 60 + 30 / 3600, 41 / 60 + 20 / 3600)),
    ("47 23.5, 0 41.2", (47 + 23.5 / 60, 41.2 / 60)),  # degrees and decimal minutes
    ("-33.8688, 151.2093", (-33.8688, 151.2093)),  # signed decimal degrees
    ("33.8688 S, 151.2093 E", (-33.8688, 151.2093)),  # hemisphere letters
]


@pytest.mark.parametrize(("text", "expected"), LOCATIONS)
def test_pasted_locations_are_echoed_then_stored_as_read(client, text, expected):
    echo = client.post("/api/parse-location", json={"text": text})
    assert echo.status_code == 200
    assert echo.json["lat"] == pytest.approx(expected[0], abs=1e-12)
    assert echo.json["lon"] == pytest.approx(expected[1], abs=1e-12)
    made = add_client(client, "Somewhere", text)
    assert (made["location"]["lat"], made["location"]["lon"]) == (echo.json["lat"],
                                                                 echo.json["lon"])


@pytest.mark.parametrize(("text", "message"), [
    ("41,40338, 2,17403", "decimal commas"),  # comma decimals are refused, not guessed
    ("[2.17, 41.40]", "GeoJSON"),
    ("-41.4 S, 2.1 E", "both a sign and the letter"),
    ("100, 0", "latitude 100"),
    ("0, 181", "longitude 181"),
    ("", "is empty"),
])
def test_unreadable_locations_are_explained(client, text, message):
    response = client.post("/api/parse-location", json={"text": text})
    assert response.status_code == 422
    assert response.json["fields"][0]["field"] == "text"
    assert message in response.json["fields"][0]["message"]


BAD_CLIENTS = [
    # (change to a valid body, field, part of the message); common practice, no source
    ({"name": ""}, "name", "must not be empty"),
    ({"name": "   "}, "name", "must not be empty"),
    ({"name": 7}, "name", "must be text"),
    ({"name": "n" * 121}, "name", "at most 120"),
    ({"location": "47.4"}, "location", "one value only"),
    ({"location": {"lat": 47.4, "lon": 200}}, "location", "longitude 200"),
    ({"location": {"lat": "47", "lon": 0}}, "location", "of type str"),
    ({"location": None}, "location", "must be text"),
    ({"visit_min": 0}, "visit_min", "1..720"),
    ({"visit_min": 721}, "visit_min", "1..720"),
    ({"visit_min": 30.5}, "visit_min", "whole number"),
    ({"visit_min": "30"}, "visit_min", "a whole number"),
    ({"visit_min": None}, "visit_min", "missing"),
    ({"windows": {"mon": "12:00-09:00"}}, "windows.mon", "ends before it starts"),
    ({"windows": {"mon": "22:00-02:00"}}, "windows.mon", "cannot cross midnight"),
    ({"windows": {"mon": "09:00-12:00, 11:00-13:00"}}, "windows.mon", "overlapping"),
    ({"windows": {"mon": "9-12"}}, "windows.mon", "not a clock time"),
    ({"windows": {"funday": "09:00-10:00"}}, "windows.funday", "not a weekday"),
    ({"windows": {"tue": 900}}, "windows.tue", "must be text"),
    ({"windows": ["09:00-12:00"]}, "windows", "object by weekday"),
    ({"notes": "n" * 2001}, "notes", "at most 2000"),
    ({"active": "yes"}, "active", "true or false"),
]


@pytest.mark.parametrize(("change", "field", "message"), BAD_CLIENTS)
def test_bad_clients_are_refused_naming_the_field(client, conn, change, field, message):
    kept = add_client(client, "Kept", "47.4, 0.7")
    before = dump(conn)
    body = {"name": "New", "location": "47.3, 0.6", "visit_min": 30} | change
    response = client.post("/api/clients", json=body)
    assert response.status_code == 422, response.json
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields and message in fields[field], response.json
    # The same change to a stored client is refused too, and nothing moves.
    response = client.put(f"/api/clients/{kept['id']}", json=change)
    assert response.status_code == 422
    assert dump(conn) == before


def test_a_missing_required_field_is_named(client):
    response = client.post("/api/clients", json={"name": "No place"})
    assert response.status_code == 422
    assert {f["field"] for f in response.json["fields"]} == {"location", "visit_min"}


def test_names_must_differ_ignoring_case(client, conn):
    first = add_client(client, "Maison Verte", "47.4, 0.7")
    before = dump(conn)
    response = client.post("/api/clients", json={"name": "maison verte", "location": "47, 0",
                                                 "visit_min": 10})
    assert response.status_code == 422
    assert f"already used by client {first['id']}" in response.json["fields"][0]["message"]
    assert dump(conn) == before


def test_unknown_client_is_404_and_unknown_fields_400(client):
    assert client.get("/api/clients/999").status_code == 404
    assert client.put("/api/clients/999", json={"name": "x"}).status_code == 404
    assert client.get("/api/clients/abc").status_code == 404
    response = client.post("/api/clients", json={"nam": "typo"})
    assert response.status_code == 400 and response.json["fields"][0]["field"] == "nam"


def test_edit_changes_only_what_is_given(client):
    made = add_client(client, "Edit Me", "47.4, 0.7", windows={"tue": "09:00-10:00"})
    changed = client.put(f"/api/clients/{made['id']}", json={"visit_min": 55}).json
    assert changed["visit_min"] == 55
    assert changed["windows"]["tue"] == "09:00-10:00" and changed["name"] == "Edit Me"
    replaced = client.put(f"/api/clients/{made['id']}", json={"windows": {"wed": "closed"}}).json
    assert replaced["windows"] == ALL_WEEK | {"wed": "closed"}


def test_deactivate_keeps_the_client_but_leaves_it_out_of_the_active_list(client):
    made = add_client(client, "Gone Quiet", "47.4, 0.7")
    add_client(client, "Still Here", "47.4, 0.8")
    client.put(f"/api/clients/{made['id']}", json={"active": False})
    names = [c["name"] for c in client.get("/api/clients?active=true").json]
    assert names == ["Still Here"]
    every = [c["name"] for c in client.get("/api/clients").json]
    assert every == ["Gone Quiet", "Still Here"]
    assert client.get("/api/clients?active=maybe").status_code == 422


def test_search_matches_name_or_notes_and_treats_wildcards_as_text(client):
    add_client(client, "Bakery 100%", "47.4, 0.7")
    add_client(client, "Florist", "47.4, 0.8", notes="near the bakery")
    add_client(client, "Garage_One", "47.4, 0.9")
    assert [c["name"] for c in client.get("/api/clients?q=bakery").json] == ["Bakery 100%",
                                                                             "Florist"]
    assert [c["name"] for c in client.get("/api/clients?q=%25").json] == ["Bakery 100%"]
    assert [c["name"] for c in client.get("/api/clients?q=_").json] == ["Garage_One"]


def test_csv_export_reads_back_with_the_standard_csv_reader(client):
    # Python's csv module (RFC 4180 dialect "excel") is the reference reader.
    add_client(client, 'Quote "and", comma', "47.123456, -0.5", visit_min=25,
               windows={"fri": "08:00-12:00, 13:00-17:00", "sun": "closed"},
               notes="line one\nline two")
    response = client.get("/api/clients.csv")
    assert response.mimetype == "text/csv"
    rows = list(csv.DictReader(io.StringIO(response.data.decode("utf-8"))))
    assert len(rows) == 1
    row = rows[0]
    assert row["name"] == 'Quote "and", comma' and row["notes"] == "line one\nline two"
    assert (float(row["lat"]), float(row["lon"]), int(row["visit_min"])) == (47.123456, -0.5, 25)
    assert row["fri"] == "08:00-12:00, 13:00-17:00" and row["sun"] == "closed"
    assert row["mon"] == "" and row["active"] == "yes"


def test_csv_round_trip_restores_the_book(client, app, tmp_path):
    add_client(client, "Alpha", "47.1, 0.1", visit_min=15, windows={"mon": "09:00-11:00"})
    add_client(client, "Beta", "47.2, 0.2", visit_min=45, notes="n", active=False)
    exported = client.get("/api/clients.csv").data
    from webapp import create_app

    other = create_app({"DATABASE": str(tmp_path / "other.sqlite")}, instance_path=str(tmp_path))
    fresh = other.test_client()
    assert fresh.post("/api/clients/import", data=exported,
                      content_type="text/csv").json == {"created": 2, "updated": 0}

    def strip(book):
        return [{k: v for k, v in c.items() if k not in ("id", "updated_at")} for c in book]

    assert strip(fresh.get("/api/clients").json) == strip(client.get("/api/clients").json)
    other.extensions["rondo_jobs"].join(timeout_s=1)


def test_csv_export_defuses_formulas_and_import_restores_them(client, tmp_path):
    # OWASP "CSV Injection": a cell starting with =, +, -, @, tab or CR is run as a formula
    # by spreadsheets; the export writes it with a leading apostrophe (shown as text).
    add_client(client, "=HYPERLINK(\"http://x\")", "47.1, 0.1", notes="+33 2 47 00 00 00")
    add_client(client, "@home-office", "47.2, 0.2", notes="-")
    exported = client.get("/api/clients.csv").data
    rows = list(csv.DictReader(io.StringIO(exported.decode("utf-8"))))
    assert [(r["name"], r["notes"]) for r in rows] == [
        ("'=HYPERLINK(\"http://x\")", "'+33 2 47 00 00 00"), ("'@home-office", "'-")]
    from webapp import create_app

    other = create_app({"DATABASE": str(tmp_path / "other.sqlite")}, instance_path=str(tmp_path))
    fresh = other.test_client()
    assert fresh.post("/api/clients/import", data=exported,
                      content_type="text/csv").json == {"created": 2, "updated": 0}
    assert sorted((c["name"], c["notes"]) for c in fresh.get("/api/clients").json) == [
        ("=HYPERLINK(\"http://x\")", "+33 2 47 00 00 00"), ("@home-office", "-")]
    other.extensions["rondo_jobs"].join(timeout_s=1)


def test_import_updates_by_name_and_accepts_the_stops_file_columns(client):
    add_client(client, "Alpha", "47.1, 0.1", visit_min=15)
    text = ("name,location,duration_min,windows,notes\n"
            "alpha,\"geo:47.5,0.5\",20,09:00-12:00,moved\n"
            "Gamma,47.3 N 0.3 E,35,,\n")
    response = client.post("/api/clients/import", data=text.encode(), content_type="text/csv")
    assert response.json == {"created": 1, "updated": 1}
    alpha = client.get("/api/clients?q=alpha").json[0]
    assert alpha["location"]["lat"] == 47.5 and alpha["visit_min"] == 20
    assert set(alpha["windows"].values()) == {"09:00-12:00"} and alpha["notes"] == "moved"


def test_import_as_a_file_upload(client):
    data = {"file": (io.BytesIO(b"name,lat,lon,visit_min\nUp,47.1,0.1,10\n"), "book.csv")}
    response = client.post("/api/clients/import", data=data, content_type="multipart/form-data")
    assert response.json == {"created": 1, "updated": 0}


@pytest.mark.parametrize(("text", "field", "message"), [
    ("", "file", "empty"),
    ("nom,lat,lon\n", "file", "column 'nom' is not known"),
    ("name,lat,visit_min\nA,1,10\n", "file", "both 'lat' and 'lon'"),
    ("name,lat,lon\nA,1,2\n", "file", "'visit_min' is missing"),
    ("name,lat,lon,visit_min\nGood,47,0,10\nBad,95,0,10\n", "line 3: location", "latitude 95"),
    ("name,lat,lon,visit_min\nA,47,0,ten\n", "line 2: visit_min", "whole number"),
    ("name,lat,lon,visit_min,mon\nA,47,0,10,9-5\n", "line 2: windows.mon", "clock time"),
    ("name,lat,lon,visit_min,active\nA,47,0,10,perhaps\n", "line 2: active", "yes or no"),
    ("name,lat,lon,visit_min\nA,47,0,10\na,47,1,10\n", "line 3: name", "also on line 2"),
    ("name,lat,lon,visit_min\nA,47,0,10,extra\n", "line 2", "has 5 cells"),
])
def test_a_bad_import_names_line_and_column_and_stores_nothing(client, conn, text, field,
                                                              message):
    add_client(client, "Existing", "47.1, 0.1")
    before = dump(conn)
    response = client.post("/api/clients/import", data=text.encode(), content_type="text/csv")
    assert response.status_code == 422, response.json
    fields = {f["field"]: f["message"] for f in response.json["fields"]}
    assert field in fields and message in fields[field], response.json
    assert dump(conn) == before


def test_import_that_is_not_utf8_is_refused(client, conn):
    before = dump(conn)
    response = client.post("/api/clients/import", data="name\nCafé".encode("latin-1"),
                           content_type="text/csv")
    assert response.status_code == 422 and "UTF-8" in response.json["message"]
    assert dump(conn) == before
