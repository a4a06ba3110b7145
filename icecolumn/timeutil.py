"""Durations and ISO 8601 times.

All times inside icecolumn are ``numpy.datetime64[ns]`` values in UTC without a
zone marker ("naive UTC").  Text given by users may carry an ISO 8601 offset
(``Z``, ``+02:00``, ``-0330``, ``+01``); it is converted to UTC here, once.
Text without an offset is taken to be UTC already.

Durations are short texts such as ``"30min"``, ``"6h"``, ``"1D"`` or ISO 8601
durations such as ``"PT6H"`` and ``"P1DT12H"``; they are returned in seconds.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Callable, Sequence

import numpy as np

from .constants import SECONDS_PER_DAY
from .errors import InputError

__all__ = ["parse_duration", "parse_time", "parse_times", "format_time", "format_duration", "DURATION_UNITS"]

#: Seconds per unit of the short duration form ``<number><unit>``.
DURATION_UNITS: dict[str, float] = {
    "s": 1.0,
    "sec": 1.0,
    "min": 60.0,
    "h": 3600.0,
    "hr": 3600.0,
    "d": SECONDS_PER_DAY,
    "D": SECONDS_PER_DAY,
    "day": SECONDS_PER_DAY,
    "days": SECONDS_PER_DAY,
    "w": 7 * SECONDS_PER_DAY,
    "W": 7 * SECONDS_PER_DAY,
}

_SHORT_DURATION = re.compile(r"\s*(\d+(?:\.\d*)?|\.\d+)\s*([A-Za-z]+)\s*")
_ISO_DURATION = re.compile(
    r"\s*P(?:(?P<w>\d+(?:\.\d+)?)W)?(?:(?P<d>\d+(?:\.\d+)?)D)?"
    r"(?:T(?:(?P<h>\d+(?:\.\d+)?)H)?(?:(?P<m>\d+(?:\.\d+)?)M)?(?:(?P<s>\d+(?:\.\d+)?)S)?)?\s*"
)

# date, optional time (hh, hh:mm, hh:mm:ss, hh:mm:ss.fff), optional offset.
_TIME = re.compile(
    r"\s*(?P<base>\d{4}-\d{2}-\d{2}"
    r"(?:[T ]\d{2}(?::\d{2}(?::\d{2}(?:\.\d+)?)?)?)?)"
    r"(?:(?P<z>[Zz])|(?P<sign>[+-])(?P<oh>\d{2})(?::?(?P<om>\d{2}))?)?\s*"
)
_TIME_HINT = "expected ISO 8601 such as 2026-10-01T06:00, optionally ending in Z or +02:00"


def parse_duration(text: str) -> float:
    """Length of a duration text in seconds.

    Parameters
    ----------
    text : str
        ``<number><unit>`` with unit one of s, min, h, D (also d, day, W), e.g.
        ``"30min"``, ``"6h"``, ``"1D"``; or an ISO 8601 duration such as ``"PT6H"``
        or ``"P1DT12H"`` (no years or months: their length varies). [1]

    Returns
    -------
    seconds : float
        The duration; always positive. [s]

    Raises
    ------
    InputError
        If the text is not a duration, or is zero.
    """
    if not isinstance(text, str):
        raise InputError(f"expected a duration text such as '30min', '6h' or '1D', got {text!r}")
    return _parse_duration_text(text)


@functools.lru_cache(maxsize=256)
def _parse_duration_text(text: str) -> float:
    """:func:`parse_duration` of a text, remembered (a run reads the same few settings for
    every member; errors are not remembered)."""
    seconds: float | None = None
    m = _SHORT_DURATION.fullmatch(text)
    if m and m.group(2) in DURATION_UNITS:
        seconds = float(m.group(1)) * DURATION_UNITS[m.group(2)]
    else:
        m = _ISO_DURATION.fullmatch(text)
        if m and any(m.groupdict().values()) and not text.strip().endswith("T"):
            factors = {"w": 7 * SECONDS_PER_DAY, "d": SECONDS_PER_DAY, "h": 3600.0, "m": 60.0, "s": 1.0}
            seconds = sum(float(v) * factors[k] for k, v in m.groupdict().items() if v)
    if seconds is None:
        units = ", ".join(sorted(set(DURATION_UNITS) - {"sec", "hr", "day", "days", "d", "w"}))
        raise InputError(
            f"{text!r} is not a duration (expected a number and a unit {units}, "
            "e.g. '30min', '6h', '1D', or ISO 8601 such as 'PT6H')"
        )
    if seconds <= 0.0:
        raise InputError(f"duration {text!r} must be positive")
    return seconds


def format_duration(seconds: float) -> str:
    """Short text of a duration, the inverse of :func:`parse_duration` for whole units.

    Parameters
    ----------
    seconds : float
        The duration. [s]

    Returns
    -------
    text : str
        The largest unit that divides it: ``"2D"``, ``"6h"``, ``"90min"``, else seconds
        such as ``"1.5s"``. [1]
    """
    for size, unit in ((SECONDS_PER_DAY, "D"), (3600.0, "h"), (60.0, "min")):
        if seconds >= size and float(seconds / size).is_integer():
            return f"{int(seconds // size)}{unit}"
    return f"{seconds:g}s"


def _split_time(text: str) -> tuple[str, int] | None:
    """Split ISO 8601 text into (naive base text, offset in minutes); None if malformed."""
    m = _TIME.fullmatch(text)
    if m is None:
        return None
    base = m.group("base").replace(" ", "T")
    if m.group("sign"):
        if len(base) == 10:  # an offset needs a time of day
            return None
        hours, minutes = int(m.group("oh")), int(m.group("om") or 0)
        if hours > 23 or minutes > 59:
            return None
        offset = hours * 60 + minutes
        return base, offset if m.group("sign") == "+" else -offset
    return base, 0


def parse_time(text: str) -> np.datetime64:
    """UTC time from ISO 8601 text.

    Parameters
    ----------
    text : str
        ``YYYY-MM-DD`` optionally followed by ``Thh``, ``Thh:mm``, ``Thh:mm:ss[.f]``
        (a space may replace ``T``) and an offset ``Z``, ``±hh``, ``±hhmm`` or
        ``±hh:mm``.  Without an offset the time is taken as UTC. [1]

    Returns
    -------
    time : numpy.datetime64
        The same instant in UTC, unit ns, no zone marker. [ns since 1970-01-01]

    Raises
    ------
    InputError
        If the text is not such a time or names an impossible date.

    Examples
    --------
    >>> str(parse_time("2027-01-15T02:00+02:00"))
    '2027-01-15T00:00:00.000000000'
    """
    if isinstance(text, np.datetime64):
        return text.astype("datetime64[ns]")
    if not isinstance(text, str):
        raise InputError(f"{text!r} is not a time ({_TIME_HINT})")
    parts = _split_time(text)
    if parts is None:
        raise InputError(f"{text!r} is not a time ({_TIME_HINT})")
    base, offset = parts
    try:
        value = np.datetime64(base, "ns")
    except ValueError:
        raise InputError(f"{text!r} is not a valid date and time ({_TIME_HINT})") from None
    return value - np.timedelta64(offset, "m")


def parse_times(
    texts: Sequence[str],
    label: Callable[[int], str] | None = None,
    source: str = "<times>",
) -> np.ndarray:
    """Parse many ISO 8601 texts at once (see :func:`parse_time`).

    Parameters
    ----------
    texts : sequence of str
        Time texts; each may carry its own offset. [1]
    label : callable, optional
        ``label(i)`` names item ``i`` in an error message (e.g. ``"line 17"``);
        default ``"item i"``. [1]
    source : str
        Name of the file or object the texts came from, first in messages. [1]

    Returns
    -------
    times : numpy.ndarray of datetime64[ns]
        The instants in UTC. [ns since 1970-01-01]

    Raises
    ------
    InputError
        ``"<source>: <label>: '<text>' is not a time (...)"`` for the first bad item.
    """
    label = label or (lambda i: f"item {i}")
    bases: list[str] = []
    offsets: list[int] = []
    for i, text in enumerate(texts):
        parts = _split_time(text) if isinstance(text, str) else None
        if parts is None:
            raise InputError(f"{source}: {label(i)}: {text!r} is not a time ({_TIME_HINT})")
        bases.append(parts[0])
        offsets.append(parts[1])
    try:
        values = np.array(bases, dtype="datetime64[ns]")
    except ValueError:
        for i, base in enumerate(bases):  # locate the impossible date
            try:
                np.datetime64(base, "ns")
            except ValueError:
                raise InputError(
                    f"{source}: {label(i)}: {texts[i]!r} is not a valid date and time ({_TIME_HINT})"
                ) from None
        raise  # pragma: no cover - numpy refused the batch but accepted each item
    if any(offsets):
        values = values - np.asarray(offsets, dtype="int64").astype("timedelta64[m]")
    return values


def format_time(value: np.datetime64, unit: str = "s") -> str:
    """ISO 8601 text of a UTC time: ``YYYY-MM-DDTHH:MM:SSZ`` (or to the minute).

    Parameters
    ----------
    value : numpy.datetime64
        A naive-UTC instant; the part below ``unit`` is dropped. [ns since 1970-01-01]
    unit : {"s", "m"}
        Last field written: seconds (default) or minutes. [1]

    Returns
    -------
    text : str
        For example ``"2026-10-01T00:00:00Z"``, or ``"2026-10-01T00:00Z"`` with
        ``unit="m"``. [1]
    """
    truncated = np.datetime64(value, "ns").astype(f"datetime64[{unit}]")
    if np.isnat(truncated):
        raise InputError("cannot format a missing time (NaT)")
    return f"{np.datetime_as_string(truncated, unit=unit)}Z"
