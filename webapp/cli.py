"""The ``rondo`` command: solve files on the laptop, serve the phone page.

Exit codes: 0 done, 2 bad input (one line naming the problem), 3 no feasible
day plan (the explanation is printed), 4 the solver failed or ran out of time
without any plan, 5 the data folder is in use (restore while the server runs).
"""

from __future__ import annotations

import argparse
import json
import sys

from solver.errors import Infeasible, SolverError

__all__ = ["main", "build_parser"]

EXIT_BAD_INPUT = 2
EXIT_INFEASIBLE = 3
EXIT_SOLVER = 4


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="rondo", description=__doc__.splitlines()[0])
    sub = parser.add_subparsers(dest="command", required=True)

    solve = sub.add_parser("solve", help="solve a TSPLIB, time-window benchmark or stops CSV file")
    solve.add_argument("file", help=".tsp/.atsp TSPLIB file, a time-window benchmark .txt, "
                                    "or a stops CSV")
    solve.add_argument("--json", action="store_true", help="print one JSON object")
    solve.add_argument("--method", default="auto",
                       choices=["auto", "dfj", "mtz", "held-karp", "heuristic"],
                       help="loop method (days with windows always use the exact day planner)")
    solve.add_argument("--cost", default="km", choices=["km", "minutes"],
                       help="what a plain loop minimises")
    _add_stops_options(solve)
    _add_day_options(solve)

    export = sub.add_parser("export", help="write a day as ics, gpx or csv: plan a stops CSV, "
                                           "or take the plan stored for --date")
    export.add_argument("file", nargs="?", help="a stops CSV; leave it out to export the plan "
                                                "stored for --date in --data DIR")
    export.add_argument("--format", required=True, choices=["ics", "gpx", "csv"])
    export.add_argument("--output", metavar="FILE", help="write here instead of standard output")
    export.add_argument("--date", metavar="YYYY-MM-DD",
                        help="the planned day (default: today); without FILE, the stored day")
    export.add_argument("--data", metavar="DIR", help="without FILE: the folder `rondo serve "
                        "--data` uses (default: instance)")
    export.add_argument("--tz", default=None, metavar="ZONE",
                        help="IANA time zone of the rep, for calendar times (default: "
                        "Europe/Vienna; a stored day uses its settings)")
    export.add_argument("--sequence", type=int, default=None,
                        help="calendar SEQUENCE; raise it for every re-export of the same day "
                        "(a stored day keeps its own)")
    export.add_argument("--travel", action="store_true", help="add a calendar event per drive")
    export.add_argument("--alarm", type=int, default=None, metavar="MIN",
                        help="remind MIN minutes before leaving for each visit")
    _add_stops_options(export)
    _add_day_options(export)

    week = sub.add_parser("week", help="spread a stops CSV over the working days")
    week.add_argument("file", help="a stops CSV with optional week columns")
    week.add_argument("--json", action="store_true", help="print one JSON object")
    week.add_argument("--days", default="Mon-Fri", help="working days, e.g. Mon-Fri or Mon Tue Thu")
    week.add_argument("--max-visits", type=int, default=None, help="cap of visits per day")
    week.add_argument("--max-work-min", type=float, default=None,
                      help="cap of minutes from leaving home to coming back")
    week.add_argument("--week-method", default="auto", choices=["auto", "exact", "improve"])
    _add_stops_options(week)
    _add_day_options(week, replan=False)

    serve = sub.add_parser("serve", help="serve the phone page on this laptop")
    serve.add_argument("--host", default=None,
                       help="address to listen on (default 127.0.0.1; with --lan 0.0.0.0)")
    serve.add_argument("--port", type=int, default=8765)
    serve.add_argument("--data", default="instance", metavar="DIR",
                       help="folder for the database and everything the app writes")
    serve.add_argument("--demo", action="store_true",
                       help="fill an empty database with the demo scenario")
    serve.add_argument("--tiles", metavar="URL", default=None,
                       help="street-map tile URL template with {z}/{x}/{y}, fetched through "
                       "this laptop (default: no street map)")
    serve.add_argument("--tile-contact", metavar="EMAIL_OR_URL", default=None,
                       help="who runs this server, sent to the tile server in the User-Agent")
    serve.add_argument("--lan", action="store_true",
                       help="serve the home network over HTTPS with this laptop's own "
                       "certificate; only phones paired on the laptop's /pair page get in")
    from .cli_backup import add_parsers as add_backup_parsers

    add_backup_parsers(sub)
    return parser


def _add_stops_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--time-limit", type=float, default=60.0, metavar="S",
                        help="stop after S seconds and report the best plan with its gap")
    parser.add_argument("--home", metavar="LAT,LON",
                        help="home position; otherwise the first CSV row is home")
    parser.add_argument("--distance", default="geodesic", choices=["geodesic", "great-circle"])
    parser.add_argument("--detour", type=float, default=None, metavar="F",
                        help="road km per straight-line km")
    parser.add_argument("--speed", type=float, default=None, metavar="KMH",
                        help="average driving speed")


def _add_day_options(parser: argparse.ArgumentParser, *, replan: bool = True) -> None:
    parser.add_argument("--day-start", metavar="HH:MM", help="departure from home")
    parser.add_argument("--day-end", metavar="HH:MM", help="latest return home")
    parser.add_argument("--objective", choices=["km", "return"], default="km",
                        help="least driving (km) or earliest return home")
    parser.add_argument("--day-method", choices=["auto", "labels", "milp"], default="auto",
                        help="exact day method: label-setting programme or the big-M MILP")
    parser.add_argument("--break", dest="break_rule", metavar="MIN@HH:MM-HH:MM",
                        help="a break of MIN minutes inside the given hours, e.g. 30@12:00-14:00")
    if replan:
        parser.add_argument("--from", dest="from_", metavar="LAT,LON|NAME",
                            help="re-plan from here: a position or the client where you stand")
        parser.add_argument("--now", metavar="HH:MM", help="re-plan: the time now")
        parser.add_argument("--done", metavar="NAME,...", help="re-plan: visits already done")


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    if args.command == "serve":
        from .backup import DataInUse, server_lock
        from .cli_backup import EXIT_IN_USE
        from .server import serve

        host = args.host or ("0.0.0.0" if args.lan else "127.0.0.1")
        try:
            with server_lock(args.data):  # while it is held, a restore refuses
                serve(host=host, port=args.port, data_dir=args.data, demo=args.demo,
                      tiles=args.tiles, tile_contact=args.tile_contact, lan=args.lan)
        except DataInUse as busy:
            print(f"rondo: {busy}", file=sys.stderr)
            return EXIT_IN_USE
        return 0
    if args.command in ("backup", "restore"):
        from .cli_backup import run as run_backup

        return run_backup(args)
    try:
        if args.command == "solve":
            from .cli_solve import run_solve

            payload, text = run_solve(args)
        elif args.command == "export":
            from .cli_export_db import prepare_export, run_export_db

            if prepare_export(args):
                return run_export_db(args)
            from .cli_export import run_export

            return run_export(args)
        elif args.command == "week":
            from .cli_week import run_week

            payload, text = run_week(args)
        else:  # pragma: no cover - argparse rejects unknown commands
            return EXIT_BAD_INPUT
    except Infeasible as why:
        if getattr(args, "json", False):
            print(json.dumps({"feasible": False, "explanation": why.explanation}, indent=2))
        else:
            print(f"rondo: {why}", file=sys.stderr)
        return EXIT_INFEASIBLE
    except ValueError as bad:  # InvalidInput derives from ValueError
        print(f"rondo: {_one_line(bad)}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except SolverError as failed:
        print(f"rondo: {_one_line(failed)}", file=sys.stderr)
        return EXIT_SOLVER
    print(json.dumps(payload, indent=2) if args.json else text)
    return 0


def _one_line(error: Exception) -> str:
    return " ".join(str(error).split())


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
