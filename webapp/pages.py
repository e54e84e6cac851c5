"""The phone page's screens: server-rendered shells that the page's own JS fills from the API."""

from __future__ import annotations

from flask import Blueprint, redirect, render_template, request, url_for

from . import settings
from .db import get_db
from .fields import parse_date

__all__ = ["bp", "SCREENS"]

bp = Blueprint("pages", __name__)

# (endpoint, tab label) in the order of the bottom bar.
SCREENS = (("pages.day", "Day"), ("pages.week", "Week"), ("pages.book", "Clients"),
           ("pages.drives", "Drives"), ("pages.setup", "Setup"))

# Only the app's own files may load; nothing leaves the laptop, no inline script runs.
_CSP = ("default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
        "connect-src 'self'; frame-src 'self'; object-src 'none'; base-uri 'none'; "
        "form-action 'self'")


def _render(template: str, screen: str, **context):
    row = settings.load(get_db())
    return render_template(template, screen=screen, screens=SCREENS,
                           is_demo=bool(row["is_demo"]), has_home=row["home_lat"] is not None,
                           **context)


@bp.after_request
def _headers(response):
    # Only these screens: a map page embedded later brings its own rules.
    response.headers.setdefault("Content-Security-Policy", _CSP)
    response.headers.setdefault("X-Content-Type-Options", "nosniff")
    response.headers.setdefault("Referrer-Policy", "no-referrer")
    return response


@bp.get("/")
def index():
    return redirect(url_for("pages.day"))


@bp.get("/day")
def day():
    date_text = request.args.get("date")
    if date_text:
        parse_date(date_text)  # a bad date in the address gets the error page, not a blank day
    return _render("day.html", "day", date=date_text or "")


@bp.get("/week")
def week():
    date_text = request.args.get("week")
    if date_text:
        parse_date(date_text, field="week")  # any day of the week; the page finds its Monday
    return _render("week.html", "week", week=date_text or "")


@bp.get("/clients")
def book():
    return _render("clients.html", "clients")


@bp.get("/drives")
def drives():
    return _render("drives.html", "drives")


@bp.get("/setup")
def setup():
    return _render("setup.html", "setup")
