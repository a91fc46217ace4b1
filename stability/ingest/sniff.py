"""Sniff a log file: container, text encoding, line endings and CSV-like dialect.

Everything is decided from the file's bytes, never from its name: the
compression container from its magic number, the encoding from a byte-order mark
or a strict UTF-8 trial (Latin-1 as the fallback that accepts any byte), and the
dialect (delimiter, decimal mark, comment prefix, free-text preamble, header)
from the first few hundred lines, the way a person reading the file would.

References
----------
1. RFC 1952, *GZIP file format specification* (magic bytes 1f 8b).
2. *.xz file format*, Tukaani project, version 1.0.4 (magic bytes fd 37 7a 58 5a 00).
3. PKWARE *APPNOTE.TXT*, ZIP file format (local file header 50 4b 03 04).
4. RFC 4180, *Common Format and MIME Type for CSV Files* (fields, delimiters).
5. The Unicode Standard, section 23.8 (byte-order marks of UTF-8 and UTF-16).
"""

from __future__ import annotations

import codecs
import io
import os
import re
import zipfile
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError
from .containers import (
    DAMAGED,
    check_path,
    check_room,
    container_of,
    decompress,
    read_plain,
    too_large,
    valid_utf8,
    valid_utf8_file,
)
from .limits import expansion_limit
from .spreadsheet import refuse_workbook, sheet_text, workbook_kind

__all__ = [
    "SAMPLE_LINES",
    "RawSource",
    "Dialect",
    "open_source",
    "sniff_dialect",
    "split_fields",
    "looks_numeric",
]

#: Lines looked at to decide the dialect (common practice: a screenful or a few).
SAMPLE_LINES = 200
_SAMPLE_BYTES = 256 * 1024
#: Lines of the data block scored for each candidate dialect.
_SCORE_LINES = 300

_BOMS = (
    (codecs.BOM_UTF8, "utf-8-sig"),
    (codecs.BOM_UTF16_LE, "utf-16-le"),
    (codecs.BOM_UTF16_BE, "utf-16-be"),
)

#: Delimiters tried, in order of preference on a tie.
DELIMITERS = {"\t": "tab", ";": "semicolon", "|": "pipe", ",": "comma", " ": "spaces"}
COMMENT_PREFIXES = ("#", "//", "%", ";")

_NUM = re.compile(r"^[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?$")
_NUM_COMMA = re.compile(r"^[-+]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][-+]?\d+)?$")
_NUM_UNIT = re.compile(r"^[-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?\s*[A-Za-zµμ%]{1,6}$")
_TIMEISH = re.compile(r"^\d{1,4}[-./:]\d{1,2}[-./:]\d{1,4}(?:[T ]?[\d:.,+\-Z]*)?$|^\d{1,2}:\d{2}")
_BAD_WORDS = re.compile(r"^(?:nan|-?inf|-+|err.*|error.*|ovld|overflow|n/?a|none|null|\?+)$", re.I)


@dataclass
class RawSource:
    """A log opened for reading: container and encoding known, text normalised.

    Attributes
    ----------
    path
        The file as given.
    container
        ``"plain"``, ``"gzip"``, ``"bz2"``, ``"xz"``, ``"zip"`` or ``"xlsx"``.
    member
        Name of the member of a zip archive or the sheet of a workbook, else None.
    encoding
        Text encoding detected (``utf-8``, ``utf-8-sig``, ``utf-16-le``, ``utf-16-be``,
        ``latin-1``).
    line_endings
        ``"LF"``, ``"CRLF"``, ``"CR"`` or ``"none"`` (a single line).
    sample
        The first lines of text (line endings removed).
    size
        Size of the file in bytes as stored.
    buffer
        UTF-8 bytes with ``\\n`` line endings when the file had to be decompressed,
        re-encoded or normalised; None when pandas can read the file itself.
    pandas_encoding
        Encoding to give pandas when ``buffer`` is None.
    sheets
        Names of the sheets of a workbook (empty for a text log).
    """

    path: str
    container: str
    member: str | None
    encoding: str
    line_endings: str
    sample: list[str]
    size: int
    buffer: bytes | None = None
    pandas_encoding: str = "utf-8"
    raw: bytes | None = field(default=None, repr=False)
    sheets: list[str] = field(default_factory=list)

    def handle(self) -> io.IOBase | str:
        """What to hand to :func:`pandas.read_csv`."""
        if self.buffer is not None:
            return io.BytesIO(self.buffer)
        return self.path

    def all_bytes(self) -> bytes:
        """The whole text as bytes in the encoding given to pandas (for line look-ups)."""
        if self.buffer is not None:
            return self.buffer
        if self.raw is not None:  # already read whole when the encoding was checked
            return self.raw
        return Path(self.path).read_bytes()


def _encoding(head: bytes) -> str:
    for bom, name in _BOMS:
        if head.startswith(bom):
            return name
    cut = head
    # a sample may end inside a multi-byte character: drop up to 3 trailing bytes
    for drop in range(4):
        try:
            (cut[: len(cut) - drop] if drop else cut).decode("utf-8")
            return "utf-8"
        except UnicodeDecodeError as exc:
            if exc.start < len(cut) - 4:
                break
    return "latin-1"


#: Control characters that do not occur in text: below 32, except tab, LF, form feed, CR.
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0e-\x1f]")


def _check_text(text: str, path: str) -> None:
    if not text.strip():
        raise InputError(
            "the file is empty", path=path, hint="give a log with a header or data rows"
        )
    sample = text[:65536]
    control = len(_CONTROL.findall(sample))
    if "\x00" in sample or control > 0.05 * len(sample):
        raise InputError(
            "not a text log: the file holds binary data",
            path=path,
            hint="give a CSV-like text log, optionally gzip, bz2, xz or zip compressed",
        )


def _line_endings(text: str) -> str:
    crlf = text.count("\r\n")
    cr = text.count("\r") - crlf
    lf = text.count("\n") - crlf
    if crlf == cr == lf == 0:
        return "none"
    return max((crlf, "CRLF"), (lf, "LF"), (cr, "CR"))[1]


def open_source(
    path: str | os.PathLike[str],
    sheet: int | str | None = None,
    max_expansion: float | None = None,
) -> RawSource:
    """Open a log, find its container, encoding and line endings, and sample its first lines.

    A spreadsheet workbook (recognised by content, whatever its name) becomes
    the text of one sheet (``sheet``: 1-based number or name, default the
    first; see :mod:`stability.ingest.spreadsheet`). An archive is decompressed
    as a stream, up to ``max_expansion`` times its size (see
    :func:`stability.ingest.limits.expansion_limit`).

    Raises
    ------
    InputError
        The file is missing, a folder, a device or a pipe, unreadable, empty,
        binary, a damaged archive, an archive that expands too far, or a
        workbook that cannot be read.
    """
    p = check_path(path)
    size = p.stat().st_size
    try:
        with open(p, "rb") as fh:
            head = fh.read(_SAMPLE_BYTES)
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror}", path=str(p)) from None
    if not head:
        raise InputError("the file is empty", path=str(p), hint="give a log with data rows")
    book = workbook_kind(str(p), head)
    if book is not None:
        return _workbook_source(p, path, book, sheet, size, max_expansion)
    if sheet is not None:
        raise InputError(
            "--sheet applies to a spreadsheet workbook, and this file is not one",
            path=str(p),
            hint="drop --sheet",
        )
    container = container_of(head)
    member = None
    data: bytes | None = None
    kept: bytes | None = None
    if container != "plain":
        data, member = decompress(p, container, max_expansion)
        head = data[:_SAMPLE_BYTES]
        if not head:
            raise InputError(f"the {container} archive is empty", path=str(p))
    encoding = _encoding(head)
    if encoding == "utf-8" and container == "plain":
        # confirm on the whole file only when it is small; large files are checked by pandas
        if size <= 64 * 1024 * 1024 and not valid_utf8_file(p):
            encoding = "latin-1"
    sample_text = head.decode(encoding, errors="replace")
    _check_text(sample_text, str(p))
    endings = _line_endings(sample_text)
    lines = sample_text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if len(head) >= _SAMPLE_BYTES and len(lines) > 1:
        lines = lines[:-1]  # the last line of a cut sample may be partial
    lines = lines[: SAMPLE_LINES * 5]
    if lines and lines[0].startswith("\ufeff"):
        lines[0] = lines[0][1:]
    src = RawSource(
        path=str(path),
        container=container,
        member=member,
        encoding=encoding,
        line_endings=endings,
        sample=lines,
        size=size,
    )
    src.raw = kept
    needs_buffer = container != "plain" or encoding.startswith("utf-16") or endings == "CR"
    if needs_buffer:
        if data is None and kept is not None:
            data = kept
        elif data is None:
            check_room(p, size)
            data = read_plain(p)
        if not (encoding == "utf-8" and endings != "CR" and valid_utf8(data)):
            # decode and encode again, holding at most two copies of the text at a time
            text = data.decode(encoding, errors="replace")
            del data
            if text.startswith("\ufeff"):
                text = text[1:]
            if endings == "CR":
                text = text.replace("\r\n", "\n").replace("\r", "\n")
            data = text.encode("utf-8")
            del text
        src.buffer = data  # UTF-8 already: the decompressed bytes themselves, no copy
        src.pandas_encoding = "utf-8"
    else:
        src.pandas_encoding = {"latin-1": "latin-1", "utf-8": "utf-8"}.get(encoding, "utf-8-sig")
    return src


def _workbook_source(
    p: Path,
    path: str | os.PathLike[str],
    book: str,
    sheet: int | str | None,
    size: int,
    max_expansion: float | None,
) -> RawSource:
    """One sheet of an .xlsx workbook as a log's text; other workbooks refused."""
    if book != "xlsx":
        refuse_workbook(book, str(p))
    limit, why = expansion_limit(size, max_expansion)
    try:
        with zipfile.ZipFile(p) as zf:  # zipfile never gives more than a member declares
            expanded = sum(i.file_size for i in zf.infolist())
    except DAMAGED as exc:
        raise InputError(f"damaged .xlsx workbook: {exc}", path=str(p)) from None
    if expanded > limit:
        raise too_large(p, "xlsx", limit, why)
    text, name, names = sheet_text(str(p), sheet)
    lines = text.split("\n")[: SAMPLE_LINES * 5]
    src = RawSource(
        path=str(path),
        container="xlsx",
        member=name,
        encoding="utf-8",
        line_endings="LF",
        sample=lines,
        size=size,
    )
    src.buffer = text.encode("utf-8")
    src.sheets = names
    return src


# ---------------------------------------------------------------------------- dialect
@dataclass
class Dialect:
    """The CSV-like dialect of a log.

    Attributes
    ----------
    delimiter
        One character, or ``" "`` for runs of white space.
    decimal
        ``"."`` or ``","``.
    comment
        Comment prefix seen in the file, or None.
    header_line
        1-based line number of the header, or None.
    header
        Column names from the header (empty when there is none).
    first_data_line
        1-based line number of the first data row.
    ncols
        Fields per data row.
    preamble
        Free-text lines before the header or data (line number, text).
    quoted
        True when fields are wrapped in double quotes.
    """

    delimiter: str
    decimal: str
    comment: str | None
    header_line: int | None
    header: list[str]
    first_data_line: int
    ncols: int
    preamble: list[tuple[int, str]] = field(default_factory=list)
    quoted: bool = False

    @property
    def delimiter_name(self) -> str:
        return DELIMITERS.get(self.delimiter, repr(self.delimiter))


def split_fields(line: str, delimiter: str) -> list[str]:
    """Split one line into stripped fields (quotes removed)."""
    if delimiter == " ":
        parts = line.split()
    else:
        parts = line.split(delimiter)
    return [f.strip().strip('"').strip() for f in parts]


def looks_numeric(text: str, decimal: str = ".") -> bool:
    """True for a number (optionally with a unit suffix) in the given decimal mark."""
    pattern = _NUM if decimal == "." else _NUM_COMMA
    return bool(pattern.match(text)) or bool(_NUM_UNIT.match(text))


def _field_kind(text: str, decimal: str) -> str:
    if text == "":
        return "empty"
    if looks_numeric(text, decimal):
        return "num"
    if _TIMEISH.match(text):
        return "time"
    if _BAD_WORDS.match(text):
        return "bad"
    return "text"


def _is_comment(line: str) -> str | None:
    s = line.lstrip()
    for prefix in COMMENT_PREFIXES:
        if s.startswith(prefix):
            return prefix
    return None


def _score(lines: list[str], delimiter: str, decimal: str) -> tuple[float, int]:
    counts = Counter(len(split_fields(ln, delimiter)) for ln in lines)
    ncols, share = counts.most_common(1)[0]
    if ncols < 2:
        return 0.0, ncols
    consistent = share / len(lines)
    kinds = Counter()
    for ln in lines:
        fields = split_fields(ln, delimiter)
        if len(fields) == ncols:
            kinds.update(_field_kind(f, decimal) for f in fields)
    total = sum(kinds.values()) or 1
    good = (kinds["num"] + kinds["time"] + kinds["empty"] + kinds["bad"]) / total
    return consistent * good, ncols


def _data_like(fields: list[str], decimal: str) -> bool:
    kinds = [_field_kind(f, decimal) for f in fields]
    usable = sum(k in ("num", "time") for k in kinds)
    return usable >= 1 and kinds.count("text") <= usable


def sniff_dialect(src: RawSource) -> Dialect:
    """Decide delimiter, decimal mark, comment prefix, preamble and header from the sample.

    Raises
    ------
    InputError
        No data row can be found in the first lines.
    """
    lines = src.sample
    candidates = [
        (i, ln) for i, ln in enumerate(lines) if ln.strip() and _is_comment(ln) in (None, ";")
    ]
    semicolon_rows = [(i, ln) for i, ln in enumerate(lines) if ln.lstrip().startswith(";")]
    if not candidates and not semicolon_rows:
        raise InputError(
            "no data rows: the file holds only comments or blank lines",
            path=src.path,
            hint="give a log with data rows",
        )
    # the data block is the bulk of the sample: judge the dialect on its later half
    body = [ln for _, ln in candidates] or [ln for _, ln in semicolon_rows]
    tail = body[len(body) // 3 :] if len(body) > 6 else body
    tail = tail[:_SCORE_LINES]
    best = (0.0, 1, "\t", ".")
    for delim in DELIMITERS:
        for decimal in (".", ","):
            if decimal == "," and delim == ",":
                continue
            score, ncols = _score(tail, delim, decimal)
            if score > best[0] + 1e-9:
                best = (score, ncols, delim, decimal)
    score, ncols, delimiter, decimal = best
    if score == 0.0:
        # a single column of values
        delimiter, ncols = ",", 1
        decimal = "," if any(_NUM_COMMA.match(ln.strip()) and "," in ln for ln in tail) else "."
    if decimal == "," and not any("," in ln for ln in tail):
        decimal = "."
    # comments: lines starting with a prefix; ';' counts only when such a line is not a data row
    comment = None
    is_comment: dict[int, bool] = {}
    for i, ln in enumerate(lines):
        prefix = _is_comment(ln)
        if prefix is None:
            continue
        if prefix == ";" and delimiter == ";":
            fields = split_fields(ln, delimiter)
            if len(fields) == ncols and _data_like(fields, decimal):
                continue
        is_comment[i] = True
        comment = comment or prefix
    # data start: first row of ncols data-like fields followed mostly by more of them
    data_rows = []
    for i, ln in enumerate(lines):
        if not ln.strip() or is_comment.get(i):
            continue
        fields = split_fields(ln, delimiter)
        if (
            abs(len(fields) - ncols) <= 1
            and len(fields) >= min(ncols, 1)
            and _data_like(fields, decimal)
        ):
            data_rows.append(i)
    if not data_rows:
        raise InputError(
            "no data rows found in the first lines: only text or a header",
            path=src.path,
            hint="give a log with numeric data rows below the header",
        )
    content = [i for i, ln in enumerate(lines) if ln.strip() and not is_comment.get(i)]
    rank = {i: k for k, i in enumerate(content)}
    is_data = set(data_rows)
    first = data_rows[0]
    for i in data_rows:
        following = content[rank[i] + 1 : rank[i] + 4]
        if 2 * sum(j in is_data for j in following) >= len(following):
            first = i
            break
    header_line = None
    header: list[str] = []
    for j in range(first - 1, -1, -1):
        ln = lines[j]
        if not ln.strip() or is_comment.get(j):
            continue
        fields = split_fields(ln, delimiter)
        if abs(len(fields) - ncols) <= 1 and any(_field_kind(f, decimal) == "text" for f in fields):
            header_line = j + 1
            header = fields[:ncols] + [""] * max(0, ncols - len(fields))
        break
    stop = (header_line - 1) if header_line else first
    preamble = [
        (j + 1, lines[j]) for j in range(stop) if lines[j].strip() and not is_comment.get(j)
    ]
    # trailing delimiter on every row: a last column with no name and no values
    quoted = any('"' in ln for ln in lines[first : first + 20])
    return Dialect(
        delimiter=delimiter,
        decimal=decimal,
        comment=comment,
        header_line=header_line,
        header=header,
        first_data_line=first + 1,
        ncols=ncols,
        preamble=preamble,
        quoted=quoted,
    )
