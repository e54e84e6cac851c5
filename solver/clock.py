"""Clock times of the working day: minutes after midnight, and "HH:MM" text.

Times inside the solver are floats of minutes after local midnight of the
planned day. A day never crosses midnight: a window such as "22:00-02:00" is
refused rather than guessed at.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from .errors import InvalidInput

__all__ = ["MINUTES_PER_DAY", "Window", "parse_clock", "format_clock", "parse_windows",
           "format_windows"]

MINUTES_PER_DAY = 24 * 60
_CLOCK = re.compile(r"^\s*([0-9]{1,2}):([0-9]{2})\s*$")  # ASCII digits only
_WINDOW_SPLIT = re.compile(r"\s*[-–]\s*")


@dataclass(frozen=True)
class Window:
    """A time window: the visit must *start* between ``start_min`` and ``end_min``.

    A window of zero width is a fixed appointment.
    """

    start_min: float
    end_min: float

    def __post_init__(self) -> None:
        for name in ("start_min", "end_min"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(
                value
            ):
                raise InvalidInput(f"window {name} {value!r} is not a number of minutes",
                                   field=name, value=value)
            if not 0 <= value <= MINUTES_PER_DAY:
                raise InvalidInput(
                    f"window {name} {value!r} is outside the day; expected 0..{MINUTES_PER_DAY}",
                    field=name, value=value)
        if self.end_min < self.start_min:
            raise InvalidInput(
                f"window {format_clock(self.start_min)}-{format_clock(self.end_min)} ends before "
                "it starts; a window cannot cross midnight",
                field="windows", value=(self.start_min, self.end_min))


def parse_clock(text: str, *, field: str = "time") -> int:
    """ "09:30" as 570 minutes after midnight; "24:00" is the end of the day."""
    if not isinstance(text, str):
        raise InvalidInput(f"{field} {text!r} is not a clock time; expected HH:MM such as 08:30",
                           field=field, value=text)
    match = _CLOCK.match(text)
    if not match:
        raise InvalidInput(f"{field} {text!r} is not a clock time; expected HH:MM such as 08:30",
                           field=field, value=text)
    hours, minutes = int(match.group(1)), int(match.group(2))
    if minutes >= 60 or hours > 24 or (hours == 24 and minutes):
        raise InvalidInput(f"{field} {text!r} is not a time of day; expected 00:00..24:00",
                           field=field, value=text)
    return hours * 60 + minutes


def format_clock(minutes: float) -> str:
    """570 as "09:30" (rounded to the nearest minute)."""
    whole = int(round(minutes))
    return f"{whole // 60:02d}:{whole % 60:02d}"


def parse_windows(text: str, *, field: str = "windows") -> tuple[Window, ...]:
    """ "09:00-12:00, 14:00-17:00" as windows in time order; "" means any time of day.

    Refuses a window that ends before it starts (including one crossing midnight)
    and windows that overlap.
    """
    if text is None or not str(text).strip():
        return ()
    windows = []
    for part in re.split(r"[,;]|\s{2,}|\s(?=[0-9]{1,2}:[0-9]{2}\s*[-–])", str(text).strip()):
        part = part.strip()
        if not part:
            continue
        pieces = _WINDOW_SPLIT.split(part)
        if len(pieces) != 2:
            raise InvalidInput(
                f"{field} part {part!r} is not a window; expected HH:MM-HH:MM such as 09:00-12:00",
                field=field, value=text)
        start = parse_clock(pieces[0], field=field)
        end = parse_clock(pieces[1], field=field)
        if end < start:
            raise InvalidInput(
                f"{field} {part!r} ends before it starts; a window cannot cross midnight "
                "(split it into two days)", field=field, value=text)
        windows.append(Window(start, end))
    windows.sort(key=lambda w: w.start_min)
    for a, b in zip(windows, windows[1:], strict=False):
        if b.start_min <= a.end_min:
            raise InvalidInput(
                f"{field} {text!r} has overlapping windows {format_windows((a,))} and "
                f"{format_windows((b,))}; merge them", field=field, value=text)
    return tuple(windows)


def format_windows(windows) -> str:
    """Windows as "09:00-12:00, 14:00-17:00"; "" for any time."""
    return ", ".join(f"{format_clock(w.start_min)}-{format_clock(w.end_min)}" for w in windows)
