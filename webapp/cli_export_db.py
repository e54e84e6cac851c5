"""``rondo export --date YYYY-MM-DD --format ics|gpx|csv [--data DIR]``: a stored day as a file.

It reads the plan ``rondo serve --data DIR`` stored and keeps the same calendar memory as the
page's downloads: SEQUENCE and cancellations continue from whichever exported last.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

from solver.errors import InvalidInput

from .errors import NotFound

__all__ = ["prepare_export", "run_export_db", "DEFAULT_DATA_DIR", "DEFAULT_TZ"]

DEFAULT_DATA_DIR = "instance"  # the default of ``rondo serve --data``
DEFAULT_TZ = "Europe/Vienna"  # the stops-CSV form's zone when --tz is left out
EXIT_BAD_INPUT = 2


def prepare_export(args) -> bool:
    """True for the stored-day form; the stops-CSV form gets its old defaults back.

    Exactly one source: a stops CSV ``file``, or ``--date`` (with ``--data``) for a stored day.
    """
    if args.file is not None:
        if args.data is not None:
            raise InvalidInput(f"give a stops CSV ({args.file!r}) or --data {args.data!r} with "
                               "--date, not both", field="--data", value=args.data)
        args.tz = DEFAULT_TZ if args.tz is None else args.tz
        args.sequence = 0 if args.sequence is None else args.sequence
        return False
    if not args.date:
        raise InvalidInput("give a stops CSV file, or --date YYYY-MM-DD to export the plan "
                           "stored by `rondo serve` (in --data DIR, default ./instance)",
                           field="file", value=None)
    for option, value in (("--tz", args.tz), ("--sequence", args.sequence)):
        if value is not None:
            raise InvalidInput(f"{option} {value!r} applies to a stops CSV only; a stored day "
                               "uses its settings' time zone and keeps its own SEQUENCE",
                               field=option, value=value)
    return True


def run_export_db(args) -> int:
    """Write the stored day ``args.date`` as ``args.format``; 2 with one line when it cannot."""
    from . import create_app, plan_exports
    from .db import DatabaseTooNew, connect
    from .fields import parse_date

    date = parse_date(args.date, field="--date")
    data_dir = os.path.abspath(args.data or DEFAULT_DATA_DIR)
    if not (Path(data_dir, "rondo.sqlite").exists() or Path(data_dir, "config.py").exists()):
        raise InvalidInput(f"--data {data_dir!r} holds no Rondo database (rondo.sqlite); give "
                           "the folder `rondo serve --data` uses", field="--data", value=data_dir)
    try:
        app = create_app(instance_path=data_dir)
    except DatabaseTooNew as exc:
        print(f"rondo: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    conn = connect(app.config["DATABASE"])
    try:
        export = plan_exports.day_file(conn, date, args.format, include_travel=args.travel,
                                       alarm_min=args.alarm)
    except NotFound as missing:
        print(f"rondo: {missing}", file=sys.stderr)
        return EXIT_BAD_INPUT
    finally:
        conn.close()
    if args.output:
        Path(args.output).write_bytes(export.data)
        revision = "" if export.sequence is None else f" (calendar SEQUENCE {export.sequence})"
        print(f"rondo: wrote {args.output}{revision}", file=sys.stderr)
    else:
        sys.stdout.buffer.write(export.data)
        sys.stdout.flush()
    return 0
