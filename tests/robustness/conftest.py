"""Shared pieces of the robustness suite: the figures it reports, a real app, a real server.

The figures (requests tried, kills survived, rows verified, requests per second, latency)
are printed at the end of every run, so they show in CI output without ``-s``.
"""

from __future__ import annotations

import contextlib
import json
import os
import re
import signal
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request
from pathlib import Path

import pytest

from webapp import create_app
from webapp.db import connect

ROOT = Path(__file__).resolve().parents[2]
_ADDRESS = re.compile(r"Rondo is at (http://127\.0\.0\.1:\d+)/")
_FIGURES = pytest.StashKey[dict]()
_FAILED = pytest.StashKey[bool]()
# Tables a refused request may still touch without losing anything: none on loopback.
VOLATILE_TABLES: frozenset[str] = frozenset()


def pytest_configure(config):
    config.stash[_FIGURES] = {}


@pytest.hookimpl(wrapper=True)
def pytest_runtest_makereport(item, call):
    report = yield
    if report.when == "call":
        item.stash[_FAILED] = report.failed
    return report


def pytest_terminal_summary(terminalreporter, exitstatus, config):
    lines = config.stash.get(_FIGURES, {})
    if not lines:
        return
    terminalreporter.section("robustness figures")
    for name in sorted(lines):
        terminalreporter.write_line(lines[name])


@pytest.fixture(scope="session")
def report(request):
    """``report(key, line)``: keep one line to print in the run's summary."""
    figures = request.config.stash[_FIGURES]

    def keep(key: str, line: str) -> None:
        figures[key] = line

    return keep


def dump(conn) -> list[str]:
    """Every row of every table as SQL text, minus tables that may change on their own."""
    lines = []
    for line in conn.iterdump():
        match = re.match(r'INSERT INTO "(\w+)"', line)
        if match and match.group(1) in VOLATILE_TABLES:
            continue
        lines.append(line)
    return lines


class World:
    """A real app on a real temporary SQLite file, its test client and a side connection."""

    def __init__(self, folder: Path):
        self.app = create_app({"TESTING": True, "DATABASE": str(folder / "rondo.sqlite")},
                              instance_path=str(folder))
        self.client = self.app.test_client()
        self.conn = connect(self.app.config["DATABASE"])

    def settle(self) -> None:
        """Wait for solves started by earlier requests, so the database stands still."""
        assert self.app.extensions["rondo_jobs"].join(timeout_s=120), "a solve did not end"

    def dump(self) -> list[str]:
        self.settle()
        return dump(self.conn)

    def data_version(self) -> int:
        """Changes when another connection commits (sqlite.org/pragma.html#pragma_data_version)."""
        self.settle()
        return self.conn.execute("PRAGMA data_version").fetchone()[0]

    def close(self) -> None:
        self.settle()
        self.conn.close()


@pytest.fixture
def world(tmp_path):
    made = World(tmp_path)
    yield made
    made.close()


# ---- the real server process --------------------------------------------------------------


def _loopback_only(url: str) -> str:
    host = urllib.parse.urlsplit(url).hostname
    assert host == "127.0.0.1", f"a test tried to reach {url}; only 127.0.0.1 is allowed"
    return url


def call(method: str, url: str, body=None, *, timeout_s: float = 30.0,
         raw: bytes | None = None, content_type: str = "application/json"):
    """One HTTP request to the loopback server: (status, parsed JSON or text, headers)."""
    data = raw if raw is not None else (None if body is None else json.dumps(body).encode())
    request = urllib.request.Request(_loopback_only(url), data=data, method=method)
    if data is not None:
        request.add_header("Content-Type", content_type)
    try:
        with urllib.request.urlopen(request, timeout=timeout_s) as response:
            status, text, headers = response.status, response.read(), response.headers
    except urllib.error.HTTPError as error:
        status, text, headers = error.code, error.read(), error.headers
    if headers.get_content_type() == "application/json":
        return status, json.loads(text or b"null"), headers
    return status, text.decode("utf-8", "replace"), headers


class ServerProcess:
    """``python -m webapp serve`` on a free loopback port; stopped by its own process id."""

    def __init__(self, data_dir: Path, log_path: Path):
        self.data_dir, self.log_path = data_dir, log_path
        self.proc: subprocess.Popen | None = None
        self.base = ""

    def start(self, *, timeout_s: float = 60.0) -> str:
        cmd = [sys.executable, "-m", "webapp", "serve", "--port", "0", "--data",
               str(self.data_dir)]
        with open(self.log_path, "a", encoding="utf-8") as log:
            log.write(f"--- start {time.strftime('%H:%M:%S')}\n")
            log.flush()
            offset = self.log_path.stat().st_size
            self.proc = subprocess.Popen(cmd, cwd=ROOT, stdout=log, stderr=subprocess.STDOUT,
                                         text=True)
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            text = self.log_path.read_text(encoding="utf-8")[offset:]
            if self.proc.poll() is not None:
                raise AssertionError(f"the server stopped with {self.proc.returncode}:\n"
                                     f"{self.log()}")
            match = _ADDRESS.search(text)
            if match:
                with contextlib.suppress(urllib.error.URLError, ConnectionError, TimeoutError):
                    call("GET", match.group(1) + "/api/settings", timeout_s=5)
                    self.base = match.group(1)
                    return self.base
            time.sleep(0.05)
        self.stop()
        raise AssertionError(f"the server did not answer within {timeout_s} s:\n{self.log()}")

    def kill(self) -> None:
        """SIGKILL: no handler runs, nothing is flushed by the server itself."""
        if self.proc is not None and self.proc.poll() is None:
            os.kill(self.proc.pid, signal.SIGKILL)
            self.proc.wait(timeout=10)
        self.proc = None

    def stop(self) -> None:
        if self.proc is None:
            return
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.kill()
        self.proc = None

    def log(self) -> str:
        return self.log_path.read_text(encoding="utf-8")[-6000:]


@pytest.fixture
def server_process(request, tmp_path):
    """A stopped server on its own data folder; always stopped at the end, log on failure."""
    made = ServerProcess(tmp_path / "data", tmp_path / "server.log")
    yield made
    made.stop()
    if request.node.stash.get(_FAILED, False) and made.log_path.exists():
        print(f"--- the server's output ({made.log_path}):\n{made.log()}")
