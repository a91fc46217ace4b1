"""The reading hints of :func:`stability.ingest.read_log`, checked and in SI units.

:func:`stability.ingest.validate_read_args` builds a :class:`ReadHints` from what
the user gave; every step of reading takes what it needs from it.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["ReadHints"]


@dataclass(frozen=True)
class ReadHints:
    """How to read one log.

    Attributes
    ----------
    kind
        ``"auto"``, ``"phase"``, ``"frequency"`` or ``"fractional"``.
    column, time_column
        Value and time columns as given (1-based number or header name), or None.
    tau0
        Sample interval in seconds, or None to take the median spacing of the stamps.
    nominal
        Nominal frequency in Hz, or None.
    wrap
        Period of wrap-around of time-interval readings in seconds, or None.
    strict
        Make the first unreadable row an error instead of a reported gap.
    stamp_tolerance
        Fraction of tau0 within which a stamp is snapped to its slot, or None
        for the default (a third).
    timezone
        IANA zone of stamps written without a zone, or None.
    sheet
        Sheet of a workbook (1-based number or name), or None for the first.
    engine
        ``"auto"``, ``"pandas"`` or ``"pyarrow"`` (see :func:`stability.ingest.read_log`).
    allow_unusual
        Read a sample interval or a record length beyond the usual bounds
        (:mod:`stability.ingest.limits`) instead of refusing it.
    max_expansion
        How many times its size an archive may expand to, or None for the default.
    """

    kind: str = "auto"
    column: int | str | None = None
    time_column: int | str | None = None
    tau0: float | None = None
    nominal: float | None = None
    wrap: float | None = None
    strict: bool = False
    stamp_tolerance: float | None = None
    timezone: str | None = None
    sheet: int | str | None = None
    engine: str = "auto"
    allow_unusual: bool = False
    max_expansion: float | None = None
