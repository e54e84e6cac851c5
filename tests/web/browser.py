"""What every browser test shares: Debian's Chromium, its flags, and the phone profile.

Playwright cannot download browsers here, so tests launch Debian's chromium with
the flags that keep it from reaching out to the network on its own.
"""

from .live_server import ROOT

__all__ = ["ARTIFACTS", "CHROMIUM", "CHROMIUM_ARGS", "PHONE"]

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
ARTIFACTS = ROOT / "test-artifacts"
PHONE = {"viewport": {"width": 390, "height": 844}, "is_mobile": True, "has_touch": True,
         "device_scale_factor": 2}
