"""Fixtures for the web layer: a real app on a real temporary SQLite file per test."""

from __future__ import annotations

from pathlib import Path

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


@pytest.fixture(scope="module")
def browser():
    """One headless Debian Chromium per test module, with the flags of tests/web/browser.py.

    Modules that need their own start (a recording proxy, a pinned certificate) define
    a ``browser`` fixture of their own, which takes precedence over this one.
    """
    from .browser import CHROMIUM, CHROMIUM_ARGS

    if not Path(CHROMIUM).exists():
        pytest.skip(f"{CHROMIUM} is not installed (apt-get install chromium)")
    playwright_api = pytest.importorskip("playwright.sync_api")
    with playwright_api.sync_playwright() as p:
        chromium = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield chromium
        chromium.close()
