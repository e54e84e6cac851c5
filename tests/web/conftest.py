"""Fixtures for the web layer: a real app on a real temporary SQLite file per test."""

from __future__ import annotations

import pytest

from webapp import create_app
from webapp.db import connect


@pytest.fixture
def app(tmp_path):
    app = create_app({"TESTING": True, "DATABASE": str(tmp_path / "rondo.sqlite")},
                     instance_path=str(tmp_path))
    statuses: list[tuple[str, int]] = []

    @app.after_request
    def _record(response):
        from flask import request

        statuses.append((request.path, response.status_code))
        return response

    yield app
    # Solves run on worker threads: let them finish before the file goes away.
    assert app.extensions["rondo_jobs"].join(timeout_s=60), "a solve job did not finish"
    server_errors = [s for s in statuses if s[1] >= 500]
    assert not server_errors, f"requests answered 5xx: {server_errors}"


@pytest.fixture
def client(app):
    return app.test_client()


@pytest.fixture
def conn(app):
    connection = connect(app.config["DATABASE"])
    yield connection
    connection.close()
