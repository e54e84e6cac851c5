"""One error handler: JSON for /api, a page otherwise; never a stack trace; the API described.

The OpenAPI check compares the description with the app's own routes (OpenAPI 3.1.0
specification, "Paths Object": every path and method the API serves is listed).
"""

from __future__ import annotations

import re

import pytest

from webapp import create_app


def test_unknown_api_paths_and_methods_answer_json(client):
    response = client.get("/api/nothing-here")
    assert response.status_code == 404 and response.json["error"] == "not_found"
    response = client.delete("/api/settings")
    assert response.status_code == 405 and response.json["error"] == "method_not_allowed"


def test_pages_get_an_error_page_not_json(client):
    response = client.get("/day?date=2026-13-01")
    assert response.status_code == 422
    assert response.mimetype == "text/html"
    assert b"is not a day of the calendar" in response.data or b"is not a date" in response.data
    assert client.get("/no-such-page").status_code == 404


def test_an_unexpected_error_is_a_bare_json_500(tmp_path):
    app = create_app({"DATABASE": str(tmp_path / "x.sqlite")}, instance_path=str(tmp_path))

    def broken():
        raise RuntimeError("secret internals")

    app.add_url_rule("/api/broken", "broken", broken)
    response = app.test_client().get("/api/broken")
    assert response.status_code == 500
    assert response.json == {"error": "internal",
                             "message": "something went wrong on the laptop; see its log"}
    assert b"secret" not in response.data and b"Traceback" not in response.data


def test_pages_allow_only_their_own_files(client):
    response = client.get("/day")
    policy = response.headers["Content-Security-Policy"]
    assert "default-src 'self'" in policy and "script-src 'self'" in policy
    # No page or static file points at another host (a CDN, a font service).
    for path in ("/day", "/clients", "/drives", "/setup", "/static/rondo.css",
                 "/static/js/common.js", "/static/js/day.js", "/static/manifest.webmanifest"):
        with client.get(path) as response:
            body = response.get_data(as_text=True)
        assert not re.search(r"(src|href)=[\"']?(https?:)?//", body), path
        assert "@import" not in body and "url(http" not in body, path


def _routes(app):
    found = set()
    for rule in app.url_map.iter_rules():
        if not rule.rule.startswith("/api/"):
            continue
        path = re.sub(r"<(?:\w+:)?(\w+)>", r"{\1}", rule.rule)
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            found.add((path, method.lower()))
    return found


def test_the_openapi_description_lists_exactly_the_routes(app, client):
    spec = client.get("/api/openapi.json").json
    assert spec["openapi"].startswith("3.1")
    described = {(path, method) for path, ops in spec["paths"].items() for method in ops}
    assert described == _routes(app) - {("/api/openapi.json", "get")}
    for path, ops in spec["paths"].items():
        for method, op in ops.items():
            assert op["responses"], (path, method)
            names = set(re.findall(r"{(\w+)}", path))
            declared = {p["name"] for p in op.get("parameters", []) if p["in"] == "path"}
            assert names == declared, (path, method)


@pytest.mark.parametrize("name", ["SettingsChange", "ClientNew", "ClientChange", "DriveEntry",
                                  "Replan", "Quote"])
def test_request_schemas_name_the_fields_the_handlers_accept(client, name):
    from webapp import clients, drives, settings
    from webapp.api import REPLAN_FIELDS

    accepted = {"SettingsChange": settings.FIELDS, "ClientNew": clients.FIELDS,
                "ClientChange": clients.CHANGE_FIELDS, "DriveEntry": drives.FIELDS,
                "Replan": REPLAN_FIELDS, "Quote": REPLAN_FIELDS | {"client_id"}}[name]
    schema = client.get("/api/openapi.json").json["components"]["schemas"][name]
    assert set(schema["properties"]) == accepted
    assert schema["additionalProperties"] is False
