"""Parse fixed-width date-time stamps straight from a log's bytes.

When every data line of a log starts with a date-time stamp written with the
same number of characters (``2026-03-01T00:00:00Z,...``), the stamps can be
read without turning them into text: the file's bytes are viewed as an array of
``uint8``, the start of every line is found from the positions of its newline
bytes, the first ``width`` bytes of each line are gathered, in blocks of lines,
as little-endian 8-byte words (``ceil(width / 8)`` gathers per line instead of
``width``), checked against a template taken from the first data line (digits
where the template has digits, the same separator bytes elsewhere; tested on
whole words with bit masks) and combined into int64 nanoseconds since
1970-01-01T00:00:00 through the days-from-civil formula of the proleptic
Gregorian calendar (tabulated per year).

The parser accepts exactly what the general (pandas) path of the reader
accepts for the same text, and gives the same instants; whenever a line does
not fit the template or a field is out of range, it returns None and the reader
falls back to the general path for the whole file.

Formats: ISO 8601 calendar date and time of day with ``T`` or a space between
them, seconds optional, fractional seconds of a fixed number (1 to 9) of digits,
an optional zone ``Z``, ``+hh:mm``, ``-hh:mm``, ``+hhmm`` or ``-hhmm`` [1];
``dd.mm.yyyy hh:mm:ss`` and ``yyyy/mm/dd hh:mm:ss`` with optional fractional
seconds; and a date and a time of day in the two leading columns.

Leap seconds: in ISO 8601 stamps, second 60 is refused (as pandas' ISO parser
refuses it, so the general path reports such a line as not a data row); in the
``dd.mm.yyyy`` and ``yyyy/mm/dd`` styles seconds 60 and 61 are accepted and roll
over into the next minute, as pandas' strptime-style parser does.

References
----------
1. ISO 8601-1:2019, *Date and time: representations for information interchange*
   (calendar date, time of day with a decimal fraction of the second, UTC
   designator ``Z`` and time shift ``+hh:mm``).
2. Proleptic Gregorian calendar: leap years are those divisible by 4 except
   centuries not divisible by 400; days from 1970-01-01 by the days-from-civil
   formula on 400-year eras of 146097 days, with the year starting in March
   (common practice).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from .timestamps import TimeFormat

__all__ = ["StampTemplate", "template_from_line", "line_starts", "parse_fixed_stamps"]

#: Lines gathered per block: keeps the (words x lines) temporaries to a few MB.
PIECE_LINES = 1 << 16
#: Bytes scanned per block when indexing newlines.
_SCAN_BYTES = 1 << 22
#: Years whose instants fit int64 nanoseconds with room for a zone shift.
_YEARS = (1678, 2261)
_DAYS_IN_MONTH = np.array([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=np.int64)

_DATE_ISO = r"(?P<Y>\d{4})-(?P<m>\d{2})-(?P<d>\d{2})"
_DATE_DOT = r"(?P<d>\d{2})\.(?P<m>\d{2})\.(?P<Y>\d{4})"
_DATE_SLASH = r"(?P<Y>\d{4})/(?P<m>\d{2})/(?P<d>\d{2})"
_TIME_HM_S = r"(?P<H>\d{2}):(?P<M>\d{2})(?::(?P<S>\d{2})(?:\.(?P<f>\d{1,9}))?)?"
_ZONE = r"(?P<z>Z|(?P<zs>[+-])(?P<zh>\d{2}):?(?P<zm>\d{2}))?"
_STRPTIME = {
    "%d.%m.%Y %H:%M:%S": (_DATE_DOT, False),
    "%d.%m.%Y %H:%M:%S.%f": (_DATE_DOT, True),
    "%Y/%m/%d %H:%M:%S": (_DATE_SLASH, False),
    "%Y/%m/%d %H:%M:%S.%f": (_DATE_SLASH, True),
}
_DIGIT_GROUPS = ("Y", "m", "d", "H", "M", "S", "f", "zh", "zm")


@dataclass(frozen=True)
class StampTemplate:
    """Where the fields of a fixed-width stamp sit in every line.

    Attributes
    ----------
    width
        Bytes checked at the start of every line: the stamp (or date, separator
        and time of day) and the one delimiter byte after it.
    fields
        Field name (``Y m d H M S f zh zm``) -> (first byte, number of digits).
    literal_pos, literal_val
        Positions that must hold exactly these bytes (separators, ``T``, ``Z``,
        delimiters).
    digit_pos
        Positions that must hold an ASCII digit.
    sign_pos
        Position of the zone sign (``+`` or ``-``, may differ between lines), or -1.
    max_second
        Largest second accepted: 59 for ISO 8601, 61 for the strptime styles.
    """

    width: int
    fields: dict[str, tuple[int, int]]
    literal_pos: np.ndarray
    literal_val: np.ndarray
    digit_pos: np.ndarray
    sign_pos: int
    max_second: int


def _stamp_regex(fmt: TimeFormat, two_columns: bool, delimiter: str) -> re.Pattern[str] | None:
    """Regex matching the start of a data line up to and including the delimiter after the stamp."""
    if delimiter == " ":
        gap, after = r"[ \t]+", r"[ \t]"
    else:
        gap = after = re.escape(delimiter)
    if fmt.pattern == "ISO8601":
        date, time, zone = _DATE_ISO, _TIME_HM_S, _ZONE
        between = gap if two_columns else "[T ]"
    elif fmt.pattern in _STRPTIME:
        date, frac = _STRPTIME[fmt.pattern]
        time = r"(?P<H>\d{2}):(?P<M>\d{2}):(?P<S>\d{2})" + (r"\.(?P<f>\d{1,9})" if frac else "")
        zone = ""
        between = gap if two_columns else " "
    else:
        return None
    return re.compile("^" + date + between + time + zone + "(?P<delim>" + after + ")", re.ASCII)


def template_from_line(
    line: str, fmt: TimeFormat, *, two_columns: bool, delimiter: str
) -> StampTemplate | None:
    """Template of the stamp at the start of ``line`` (the first data line), or None.

    Parameters
    ----------
    line
        The start of the first data line, one character per byte (decoded as
        Latin-1, so that character positions are byte positions).
    fmt
        The time format the reader detected (``style == "datetime"``).
    two_columns
        True when the date and the time of day are the two leading columns.
    delimiter
        The log's delimiter (``" "`` for runs of white space).

    Returns
    -------
    StampTemplate or None
        None when the line does not start with a stamp of ``fmt`` in fixed width,
        or the stamp is written in a way the fast path does not take.
    """
    if fmt.style != "datetime":
        return None
    rx = _stamp_regex(fmt, two_columns, delimiter)
    if rx is None:
        return None
    match = rx.match(line)
    if match is None:
        return None
    has_zone = match.groupdict().get("z") is not None
    if has_zone and not fmt.aware:
        return None
    width = match.end()
    head = line[:width].encode("ascii")
    fields: dict[str, tuple[int, int]] = {}
    is_digit = np.zeros(width, dtype=bool)
    for name in _DIGIT_GROUPS:
        if name in rx.groupindex and match.group(name) is not None:
            a, b = match.span(name)
            fields[name] = (a, b - a)
            is_digit[a:b] = True
    sign_pos = match.start("zs") if match.groupdict().get("zs") is not None else -1
    is_literal = ~is_digit
    if sign_pos >= 0:
        is_literal[sign_pos] = False
    literal_pos = np.flatnonzero(is_literal)
    return StampTemplate(
        width=width,
        fields=fields,
        literal_pos=literal_pos,
        literal_val=np.frombuffer(head, dtype=np.uint8)[literal_pos].copy(),
        digit_pos=np.flatnonzero(is_digit),
        sign_pos=sign_pos,
        max_second=59 if fmt.pattern == "ISO8601" else 61,
    )


def line_starts(buf: np.ndarray, first_line: int, *, skip: int = 0) -> np.ndarray | None:
    """Byte offsets of the starts of lines ``first_line`` (1-based) to the last line.

    A final newline at the end of the buffer does not open another line. Returns
    None when there is no such line or the buffer holds a carriage return that
    does not end a line (the CSV parser would split the line there).

    Parameters
    ----------
    buf
        The file's bytes as ``uint8``.
    first_line
        1-based number of the first line wanted.
    skip
        Bytes before the first line (a UTF-8 byte-order mark).
    """
    newlines = []
    lone_cr = 0
    for lo in range(0, buf.size, _SCAN_BYTES):  # loop over blocks of bytes
        piece = buf[lo : lo + _SCAN_BYTES]
        nl = np.flatnonzero(piece == 10)
        nl += lo
        carriage = int(np.count_nonzero(piece == 13))
        if carriage or (lo and buf[lo - 1] == 13):  # every CR must be the first half of a CRLF
            before = nl[nl > 0] - 1
            lone_cr += carriage - int(np.count_nonzero(buf[before] == 13))
        newlines.append(nl)
    if lone_cr:
        return None
    nl = np.concatenate(newlines) if newlines else np.empty(0, dtype=np.int64)
    del newlines
    # line k (1-based) starts after the (k-1)-th newline
    if first_line < 1 or first_line - 1 > nl.size:
        return None
    nl += 1
    starts = np.concatenate(([skip], nl)) if first_line == 1 else nl[first_line - 2 :]
    if starts.size and starts[-1] >= buf.size:  # the newline ended the file
        starts = starts[:-1]
    return starts.astype(np.int64, copy=False) if starts.size else None


def _word_masks(tpl: StampTemplate, nwords: int) -> tuple[np.ndarray, ...]:
    """Per 8-byte word of a line start: literal mask and value, digit mask (little-endian).

    Each is a column ``(nwords, 1)`` to broadcast against blocks of words ``(nwords, lines)``.
    """
    lit = np.zeros(8 * nwords, dtype=np.uint8)
    lit_val = np.zeros(8 * nwords, dtype=np.uint8)
    digit = np.zeros(8 * nwords, dtype=np.uint8)
    lit[tpl.literal_pos] = 0xFF
    lit_val[tpl.literal_pos] = tpl.literal_val
    digit[tpl.digit_pos] = 0xFF
    return tuple(a.view("<u8")[:, None] for a in (lit, lit_val, digit))


def _number(nib: np.ndarray, where: tuple[int, int]) -> np.ndarray:
    """Decimal value (int32) of the digits ``where = (first, count)`` of a block of digits.

    ``nib`` is ``(nwords, 8 * lines)``: byte ``p`` of every line is ``nib[p // 8, p % 8 :: 8]``.
    """
    first, count = where
    out = nib[first // 8, first % 8 :: 8].astype(np.int32)
    for p in range(first + 1, first + count):  # loop over the digits of one field
        out *= 10
        out += nib[p // 8, p % 8 :: 8]
    return out


def _days_from_civil(y: np.ndarray, m: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Days since 1970-01-01 of proleptic Gregorian dates (years >= 1; common practice)."""
    y = y - (m <= 2)
    era = y // 400
    yoe = y - era * 400  # year of era, 0..399
    mp = (m + 9) % 12  # month counted from March, 0..11
    doy = (153 * mp + 2) // 5 + d - 1  # day of the year from 1 March, 0..365
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy  # day of the era, 0..146096
    return era * 146097 + doe - 719468  # 719468 days from 0000-03-01 to 1970-01-01


def _year_tables() -> tuple[np.ndarray, np.ndarray]:
    """Days from 1970-01-01 to 1 January, and leap-year flags, for every year in range."""
    years = np.arange(_YEARS[0], _YEARS[1] + 1, dtype=np.int64)
    one = np.ones_like(years)
    first = _days_from_civil(years, one, one)
    leap = (years % 4 == 0) & ((years % 100 != 0) | (years % 400 == 0))
    return first.astype(np.int32), leap


_YEAR_DAYS, _LEAP = _year_tables()
#: Days from 1 January to the first of each month in a common year (index 1..12).
_MONTH_DAYS = np.concatenate(([0], np.cumsum(np.r_[0, _DAYS_IN_MONTH[1:12]]))).astype(np.int32)
_LOW = np.uint64(0x0F0F0F0F0F0F0F0F)
_HIGH = np.uint64(0xF0F0F0F0F0F0F0F0)
_ASCII_ZERO = np.uint64(0x3030303030303030)
_SIX = np.uint64(0x0606060606060606)
_CARRY = np.uint64(0x1010101010101010)


def _piece_ns(
    words: np.ndarray, tpl: StampTemplate, masks: tuple[np.ndarray, ...]
) -> np.ndarray | None:
    """Nanoseconds since 1970 of one block of lines, or None if any line does not fit.

    ``words`` is ``(nwords, lines)``: the first ``8 * nwords`` bytes of each line
    as little-endian uint64 words.
    """
    lit, lit_val, digit = masks
    if np.any((words & lit) != lit_val):
        return None
    # a digit byte is 0x30..0x39: high nibble 3, and low nibble + 6 does not carry into bit 4
    low = words & _LOW
    if np.any((words & (_HIGH & digit)) != (_ASCII_ZERO & digit)) or np.any(
        (low + _SIX) & (_CARRY & digit)
    ):
        return None
    nib = low.view(np.uint8)  # the digit values, one byte per character
    f = tpl.fields
    year, month, day = _number(nib, f["Y"]), _number(nib, f["m"]), _number(nib, f["d"])
    hour, minute = _number(nib, f["H"]), _number(nib, f["M"])
    if (
        year.min() < _YEARS[0]
        or year.max() > _YEARS[1]
        or month.min() < 1
        or month.max() > 12
        or day.min() < 1
        or hour.max() > 23
        or minute.max() > 59
    ):
        return None
    yi = year - _YEARS[0]
    long = np.flatnonzero(day > 28)  # only these can exceed their month
    if long.size:
        m = month[long]
        if np.any(day[long] > _DAYS_IN_MONTH[m] + (_LEAP[yi[long]] & (m == 2))):
            return None
    days = _YEAR_DAYS[yi] + _MONTH_DAYS[month] + (day - 1)
    days += _LEAP[yi] & (month > 2)
    seconds = days.astype(np.int64) * 86400
    seconds += hour * 3600 + minute * 60
    if "S" in f:
        second = _number(nib, f["S"])
        if second.max() > tpl.max_second:
            return None
        seconds += second
    if "zh" in f:
        zh, zm = _number(nib, f["zh"]), _number(nib, f["zm"])
        if zh.max() > 23 or zm.max() > 59:
            return None
        sp = tpl.sign_pos
        sign = words.view(np.uint8)[sp // 8, sp % 8 :: 8]
        plus = sign == ord("+")
        if not np.all(plus | (sign == ord("-"))):
            return None
        shift = zh * 3600 + zm * 60
        seconds -= np.where(plus, shift, -shift)
    ns = seconds * 1_000_000_000
    if "f" in f:
        ns += _number(nib, f["f"]).astype(np.int64) * 10 ** (9 - f["f"][1])
    return ns


def parse_fixed_stamps(
    buf: np.ndarray, starts: np.ndarray, tpl: StampTemplate
) -> np.ndarray | None:
    """Int64 nanoseconds since 1970 of the stamp at each line start, or None.

    The first bytes of every line are gathered as unaligned 8-byte words (a few
    gathers per line instead of one per byte), in blocks of :data:`PIECE_LINES`
    lines so that temporaries stay small whatever the length of the file.

    Parameters
    ----------
    buf
        The file's bytes as ``uint8``.
    starts
        Byte offset of the start of every line to parse (see :func:`line_starts`).
    tpl
        The template from the first data line (:func:`template_from_line`).

    Returns
    -------
    numpy.ndarray or None
        One int64 per line: naive stamps as if UTC, zoned stamps converted to UTC.
        None when any line does not match the template or holds an impossible date
        or time (month 13, 29 February of a common year, hour 24 ...).
    """
    n = starts.size
    if n == 0 or int(starts[-1]) + tpl.width > buf.size:
        return None
    nwords = -(-tpl.width // 8)
    span = 8 * nwords
    masks = _word_masks(tpl, nwords)
    word_offsets = np.arange(0, span, 8, dtype=np.int64)[:, None]
    # lines whose words would run past the end of the file are read from a padded copy
    safe = int(np.searchsorted(starts, buf.size - span, side="right"))
    out = np.empty(n, dtype=np.int64)
    if safe:
        # every byte offset as the start of an unaligned little-endian 8-byte word
        win = np.ndarray(shape=(buf.size - 7,), dtype="<u8", buffer=buf, strides=(1,))
        for lo in range(0, safe, PIECE_LINES):  # loop over blocks of lines
            hi = min(safe, lo + PIECE_LINES)
            ns = _piece_ns(win[word_offsets + starts[None, lo:hi]], tpl, masks)
            if ns is None:
                return None
            out[lo:hi] = ns
    if safe < n:
        base = int(starts[safe])
        tail = np.zeros(buf.size - base + span, dtype=np.uint8)
        tail[: buf.size - base] = buf[base:]
        win = np.ndarray(shape=(tail.size - 7,), dtype="<u8", buffer=tail, strides=(1,))
        ns = _piece_ns(win[word_offsets + (starts[None, safe:] - base)], tpl, masks)
        if ns is None:
            return None
        out[safe:] = ns
    return out
