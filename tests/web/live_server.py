"""Start the real Rondo server (``python -m webapp serve``) on a free loopback port for a test."""

from __future__ import annotations

import contextlib
import json
import re
import subprocess
import sys
import time
import urllib.error
import urllib.request
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
_ADDRESS = re.compile(r"Rondo is at (http://127\.0\.0\.1:\d+)/")


def get_json(url: str):
    with urllib.request.urlopen(url, timeout=5) as response:
        return json.loads(response.read())


@contextlib.contextmanager
def running_server(data_dir: Path, *, demo: bool = False, timeout_s: float = 30.0):
    """Yield the base URL; show the server's output if it fails to come up; always stop it."""
    log_path = Path(data_dir).with_suffix(".log")
    # Port 0: the system picks a free port and the server prints which.
    cmd = [sys.executable, "-m", "webapp", "serve", "--port", "0", "--data", str(data_dir)]
    if demo:
        cmd.append("--demo")
    with open(log_path, "w", encoding="utf-8") as log:
        proc = subprocess.Popen(cmd, cwd=ROOT, stdout=log, stderr=subprocess.STDOUT, text=True)
    try:
        base = _wait_until_up(proc, log_path, timeout_s)
        yield base, log_path
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)


def _wait_until_up(proc, log_path: Path, timeout_s: float) -> str:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        text = log_path.read_text(encoding="utf-8")
        if proc.poll() is not None:
            raise AssertionError(f"the server stopped with {proc.returncode}:\n{text}")
        match = _ADDRESS.search(text)
        if match:
            try:
                get_json(match.group(1) + "/api/settings")
                return match.group(1)
            except (urllib.error.URLError, ConnectionError):
                pass
        time.sleep(0.1)
    raise AssertionError(f"the server did not answer within {timeout_s} s:\n"
                         f"{log_path.read_text(encoding='utf-8')}")
