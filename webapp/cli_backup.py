"""``rondo backup`` and ``rondo restore``: a consistent copy of the database, and back again."""

from __future__ import annotations

import argparse
import json
import sys

from . import backup as backups

__all__ = ["add_parsers", "run", "EXIT_IN_USE"]

EXIT_BAD_INPUT = 2  # as in webapp.cli
EXIT_IN_USE = 5  # the data folder is in use by a running server


def add_parsers(sub) -> None:
    """The two subcommands, added to ``rondo``'s subparsers."""
    made = sub.add_parser("backup", help="copy the database to a file, even while the server "
                                         "runs")
    made.add_argument("--data", default="instance", metavar="DIR",
                      help="the folder `rondo serve --data` uses (default: instance)")
    made.add_argument("--output", required=True, metavar="FILE",
                      help="the backup file to write (replaced if it exists)")
    made.add_argument("--json", action="store_true", help="print one JSON object")

    back = sub.add_parser("restore", help="put a backup back; the server must be stopped",
                          description="Check FILE is a sound Rondo database, keep the current "
                          "one as rondo-before-restore-<time>.sqlite, then replace it. Refuses "
                          "while `rondo serve` runs on the folder.")
    back.add_argument("file", help="a file made by rondo backup")
    back.add_argument("--data", default="instance", metavar="DIR",
                      help="the folder `rondo serve --data` uses (default: instance)")
    back.add_argument("--json", action="store_true", help="print one JSON object")


def run(args: argparse.Namespace) -> int:
    """Run ``backup`` or ``restore``; the exit code (0, 2 bad file or folder, 5 in use)."""
    try:
        if args.command == "backup":
            done = backups.backup(args.data, args.output)
            text = (f"rondo: backed up {args.data} to {done['path']} "
                    f"({_counts(done)}; schema version {done['schema_version']})")
        else:
            done = backups.restore(args.data, args.file)
            kept = done["previous_kept_as"]
            text = (f"rondo: restored {done['restored_from']} into {done['database']} "
                    f"({_counts(done)})"
                    + (f"; the previous database is kept as {kept}" if kept else ""))
    except backups.DataInUse as busy:
        print(f"rondo: {busy}", file=sys.stderr)
        return EXIT_IN_USE
    except (backups.BackupError, OSError) as bad:
        print(f"rondo: {' '.join(str(bad).split())}", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(json.dumps(done, indent=2) if args.json else text)
    return 0


def _counts(done: dict) -> str:
    c = done["counts"]
    return (f"{c['clients']} clients, {c['day_plans']} day plans, {c['visits_done']} visits "
            f"done, {c['drive_entries']} drives")
