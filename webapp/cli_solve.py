"""``rondo solve``: read a file, pick the right solver call, and format the answer."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from solver.clock import format_clock, parse_clock
from solver.coordinates import parse_position
from solver.day import BreakRule, DayProblem, DayRules, Visit
from solver.day_exact import plan_day
from solver.distances import DEFAULT_DETOUR_FACTOR, DEFAULT_SPEED_KMH, build_travel_matrix
from solver.errors import InvalidInput
from solver.loop import solve_loop
from solver.stops_file import Stop, read_stops_csv
from solver.tsplib import read_tsplib
from solver.tsptw_file import looks_like_tsptw, parse_tsptw

__all__ = ["run_solve", "read_home_and_stops", "plan_stops_day"]

DEFAULT_DAY_START = "08:00"  # common practice, no source
DEFAULT_DAY_END = "18:00"  # common practice, no source
_BREAK = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*@\s*(\d{1,2}:\d{2})\s*-\s*(\d{1,2}:\d{2})\s*$")


def run_solve(args) -> tuple[dict, str]:
    path = Path(args.file)
    if not path.is_file():
        raise InvalidInput(f"file {str(path)!r} does not exist", field="file", value=str(path))
    suffix = path.suffix.lower()
    if suffix in (".tsp", ".atsp"):
        return _solve_tsplib(path, args)
    head = path.read_text(encoding="utf-8-sig", errors="replace")
    if looks_like_tsptw(head):
        return _solve_tsptw(path, head, args)
    return _solve_stops(path, args)


def _loop_payload(result, order_labels) -> dict:
    data = result.as_dict()
    return {"length": data.pop("length"), "order": order_labels, **data} | {
        "order": order_labels}


def _proof_line(result) -> str:
    if result.proven_optimal:
        return f"proven optimal ({result.method}, {result.seconds:.2f} s)"
    return (f"NOT proven: at most {100 * result.gap:.2f} % above the optimum "
            f"(bound {result.lower_bound:g}; {result.method}, {result.seconds:.2f} s)")


def _solve_tsplib(path: Path, args) -> tuple[dict, str]:
    instance = read_tsplib(path)
    result = solve_loop(instance.matrix, method=args.method, time_limit_s=args.time_limit)
    order = [v + 1 for v in result.order]  # TSPLIB numbers nodes from 1
    payload = _loop_payload(result, order)
    payload["length"] = int(round(result.length)) if float(result.length).is_integer() else \
        result.length
    payload["name"] = instance.name
    text = f"{instance.name}: length {payload['length']}, {_proof_line(result)}\n" \
           f"order: {' '.join(map(str, order))}"
    return payload, text


def _solve_tsptw(path: Path, text: str, args) -> tuple[dict, str]:
    instance = parse_tsptw(text, name=path.stem)
    n = len(instance.matrix)
    travel = instance.matrix.astype(float)
    visits = tuple(
        Visit(str(k + 1), 0.0, (_window(instance.ready[k], instance.due[k]),)) for k in range(1, n)
    )
    rules = DayRules(float(instance.ready[0]), float(instance.due[0]), objective="km")
    plan = plan_day(DayProblem(travel, travel, visits, rules), time_limit_s=args.time_limit)
    order = [1] + [v.node + 1 for v in plan.visits]
    payload = {
        "name": instance.name,
        "length": int(round(plan.total_km)),
        "order": order,
        "proven_optimal": plan.proven_optimal,
        "lower_bound": plan.lower_bound,
        "gap": plan.gap,
        "seconds": plan.seconds,
        "method": plan.method,
        "return": plan.return_min,
    }
    proof = "proven optimal" if plan.proven_optimal else f"NOT proven (gap {100 * plan.gap:.2f} %)"
    return payload, (f"{instance.name}: travel time {payload['length']}, {proof} "
                     f"({plan.method}, {plan.seconds:.2f} s)\norder: {' '.join(map(str, order))}")


def _window(ready, due):
    from solver.clock import Window

    return Window(float(ready), float(due))


def read_home_and_stops(args) -> tuple[Stop, list[Stop], set[str], object]:
    """Home, the stops and the travel matrix of a stops CSV under the command's options."""
    stops, optional = read_stops_csv(Path(args.file))
    if args.home:
        home = Stop("Home", parse_position(args.home, field="--home"))
    else:
        home, stops = stops[0], stops[1:]
    matrix = build_travel_matrix(
        [home.position] + [s.position for s in stops],
        mode=args.distance,
        detour_factor=args.detour if args.detour is not None else DEFAULT_DETOUR_FACTOR,
        speed_kmh=args.speed if args.speed is not None else DEFAULT_SPEED_KMH,
    )
    return home, stops, optional, matrix


def _solve_stops(path: Path, args) -> tuple[dict, str]:
    home, stops, optional, matrix = read_home_and_stops(args)
    day_mode = bool(optional & {"duration_min", "windows"}) or any(
        getattr(args, a) for a in ("day_start", "day_end", "from_", "now", "done", "break_rule")
    )
    if not day_mode:
        cost = matrix.km if args.cost == "km" else matrix.minutes
        result = solve_loop(cost, method=args.method, time_limit_s=args.time_limit)
        names = [home.name] + [s.name for s in stops]
        order = [names[v] for v in result.order]
        payload = _loop_payload(result, order)
        payload["unit"] = args.cost
        text = (f"loop of {len(stops)} stops: {result.length:.2f} {args.cost}, "
                f"{_proof_line(result)}\n" + " -> ".join(order + [home.name]))
        return payload, text
    return _solve_day(home, stops, matrix, args)


def plan_stops_day(home: Stop, stops: list[Stop], matrix, args):
    """The day plan of a stops CSV under the command's day and re-plan options."""
    visits = tuple(Visit(s.name, s.service_min, s.windows) for s in stops)
    rules = DayRules(
        parse_clock(args.day_start or DEFAULT_DAY_START, field="--day-start"),
        parse_clock(args.day_end or DEFAULT_DAY_END, field="--day-end"),
        objective=args.objective,
        break_rule=_break_rule(args.break_rule),
    )
    index = {s.name: k for k, s in enumerate(stops, start=1)}
    done = _names(args.done, index, "--done")
    km, minutes = np.asarray(matrix.km), np.asarray(matrix.minutes)
    start_node = 0
    if args.from_:
        if args.from_ in index:
            start_node = index[args.from_]
            if start_node not in done:
                done.append(start_node)
        else:
            here = parse_position(args.from_, field="--from")
            everything = [home.position] + [s.position for s in stops] + [here]
            grown = build_travel_matrix(
                everything, mode=args.distance,
                detour_factor=args.detour if args.detour is not None else DEFAULT_DETOUR_FACTOR,
                speed_kmh=args.speed if args.speed is not None else DEFAULT_SPEED_KMH)
            km, minutes = np.asarray(grown.km), np.asarray(grown.minutes)
            start_node = len(everything) - 1
    elif done:
        raise InvalidInput("--done needs --from (where you stand now)", field="--from")
    start_min = parse_clock(args.now, field="--now") if args.now else None
    todo = tuple(k for k in range(1, len(stops) + 1) if k not in done)
    problem = DayProblem(km, minutes, visits, rules, start_node=start_node, start_min=start_min,
                         todo=todo)
    plan = plan_day(problem, time_limit_s=args.time_limit,
                    method=getattr(args, "day_method", "auto"))
    here = parse_position(args.from_, field="--from") if start_node > len(stops) else None
    return plan, here


def _solve_day(home: Stop, stops: list[Stop], matrix, args) -> tuple[dict, str]:
    plan, _ = plan_stops_day(home, stops, matrix, args)
    data = plan.as_dict()
    payload = {
        "length": plan.total_km,
        "order": [v.name for v in plan.visits],
        "proven_optimal": plan.proven_optimal,
        "lower_bound": plan.lower_bound,
        "gap": plan.gap,
        "seconds": plan.seconds,
        "method": plan.method,
        "objective": plan.objective,
        "visits": [{k: v[k] for k in ("name", "arrive", "start", "depart", "wait_min",
                                       "leg_km", "leg_min")} for v in data["visits"]],
        "return": data["return"],
        "total_drive_min": plan.total_drive_min,
    }
    lines = [f"{'stop':<28} arrive start  depart  wait  leg km"]
    for v in plan.visits:
        lines.append(f"{v.name[:28]:<28} {format_clock(v.arrive_min)}  {format_clock(v.start_min)}"
                     f"  {format_clock(v.depart_min)}  {v.wait_min:4.0f}  {v.leg_km:6.1f}")
    proof = "proven optimal" if plan.proven_optimal else \
        f"NOT proven: at most {100 * plan.gap:.2f} % above the optimum"
    lines.append(f"home by {format_clock(plan.return_min)}; {plan.total_km:.1f} km, "
                 f"{plan.total_drive_min:.0f} min driving; {proof} ({plan.method})")
    return payload, "\n".join(lines)


def _names(text: str | None, index: dict[str, int], field: str) -> list[int]:
    if not text:
        return []
    nodes = []
    for name in (part.strip() for part in text.split(",")):
        if name not in index:
            raise InvalidInput(f"{field}: no stop is named {name!r}", field=field, value=name)
        nodes.append(index[name])
    return nodes


def _break_rule(text: str | None) -> BreakRule | None:
    if not text:
        return None
    match = _BREAK.match(text)
    if not match:
        raise InvalidInput(f"--break {text!r} is not MIN@HH:MM-HH:MM such as 30@12:00-14:00",
                           field="--break", value=text)
    return BreakRule(float(match.group(1)), parse_clock(match.group(2), field="--break"),
                     parse_clock(match.group(3), field="--break"))
