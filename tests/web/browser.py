"""What every browser test shares: Debian's Chromium, its flags, and the phone profile.

Playwright cannot download browsers here, so tests launch Debian's chromium with
the flags that keep it from reaching out to the network on its own.
"""

import urllib.parse

from .live_server import ROOT

__all__ = ["ARTIFACTS", "CHROMIUM", "CHROMIUM_ARGS", "PHONE", "keep_on_loopback"]

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
ARTIFACTS = ROOT / "test-artifacts"
PHONE = {"viewport": {"width": 390, "height": 844}, "is_mobile": True, "has_touch": True,
         "device_scale_factor": 2}


def keep_on_loopback(context) -> list[str]:
    """Let the context's requests to 127.0.0.1 through; abort every other one and list it."""
    outside: list[str] = []

    def gate(route):
        if urllib.parse.urlsplit(route.request.url).hostname == "127.0.0.1":
            route.continue_()
        else:
            outside.append(route.request.url)
            route.abort()

    context.route("**/*", gate)
    return outside
