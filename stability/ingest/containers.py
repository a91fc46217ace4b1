"""Open the file of a log safely: a regular file, archives decompressed within bounds.

The compression container is decided from the file's magic number, never from
its name. Archives are decompressed as a stream and stop at a bound on the
expanded size (:func:`stability.ingest.limits.expansion_limit`), so a
decompression bomb is one clear message instead of exhausted memory. A path
that is not a regular file (a device such as ``/dev/zero``, a named pipe, a
socket) is refused before anything is read: it may never end, and a log is read
more than once. Every failure of the standard library's decompressors (a
damaged stream, an encrypted zip member, a compression method zipfile lacks) is
one :class:`~stability.errors.InputError` naming the file.

References
----------
1. RFC 1952, *GZIP file format specification* (magic bytes 1f 8b).
2. *.xz file format*, Tukaani project, version 1.0.4 (magic bytes fd 37 7a 58 5a 00).
3. PKWARE *APPNOTE.TXT*, ZIP file format, sections 4.3.7 (local file header
   50 4b 03 04), 4.4.4 (general purpose bit 0: encrypted) and 4.4.5 (compression methods).
4. IEEE Std 1003.1 (POSIX), ``stat()`` file types and ``ELOOP`` (too many symbolic links).
"""

from __future__ import annotations

import bz2
import codecs
import errno
import gzip
import io
import lzma
import os
import stat
import struct
import zipfile
import zlib
from pathlib import Path

import numpy as np

from ..errors import InputError
from .limits import available_bytes, expansion_limit

__all__ = [
    "CHUNK",
    "DAMAGED",
    "check_path",
    "container_of",
    "decompress",
    "read_plain",
    "valid_utf8",
    "valid_utf8_file",
    "check_room",
    "too_large",
]

_MAGIC = (
    (b"\x1f\x8b", "gzip"),
    (b"BZh", "bz2"),
    (b"\xfd7zXZ\x00", "xz"),
    (b"PK\x03\x04", "zip"),
)


def check_path(path: str | os.PathLike[str]) -> Path:
    """The path of a regular, readable file; anything else is one clear :class:`InputError`.

    A device (``/dev/zero``), a named pipe or a socket is refused: the log is
    read more than once and its size must be known, and a device or a pipe
    may never end.
    """
    p = Path(path)
    try:
        info = os.stat(p)
    except OSError as exc:
        raise _path_error(p, exc) from None
    if stat.S_ISDIR(info.st_mode):
        raise InputError(
            "is a folder, not a log file", path=str(p), hint="give the path of one log file"
        )
    if not stat.S_ISREG(info.st_mode):
        what = (
            "a named pipe"
            if stat.S_ISFIFO(info.st_mode)
            else "a socket"
            if stat.S_ISSOCK(info.st_mode)
            else "a device"
        )
        raise InputError(
            f"is {what}, not a regular file",
            path=str(p),
            hint="save the log to a file and give the path of that file",
        )
    if not os.access(p, os.R_OK):
        raise InputError(
            "cannot read the file: permission denied",
            path=str(p),
            hint="check the file's permissions",
        )
    return p


def _path_error(p: Path, exc: OSError) -> InputError:
    """The message for a path that cannot be looked at (missing, a link loop, ...)."""
    if exc.errno == errno.ELOOP:
        return InputError(
            "symbolic link loop: the links point back to each other",
            path=str(p),
            hint="point the link at the log file, or give the file's own path",
        )
    if exc.errno in (errno.ENOENT, errno.ENOTDIR):
        dangling = p.is_symlink()
        return InputError(
            "symbolic link to a missing file" if dangling else "file not found",
            path=str(p),
            hint="check the path of the log file",
        )
    if exc.errno == errno.EACCES:
        return InputError(
            "cannot reach the file: permission denied on a folder of its path",
            path=str(p),
            hint="check the permissions of the folders above the log",
        )
    return InputError(
        f"cannot open the file: {exc.strerror or exc}",
        path=str(p),
        hint="check the path of the log file",
    )


def container_of(head: bytes) -> str:
    """``"gzip"``, ``"bz2"``, ``"xz"``, ``"zip"`` from the magic number, else ``"plain"``."""
    for magic, name in _MAGIC:
        if head.startswith(magic):
            return name
    return "plain"


#: Bytes read from a compressed stream at a time.
CHUNK = 1 << 20
#: Errors of damaged archives: the stdlib decompressors and zipfile raise these
#: (zlib.error for bad deflate data, EOFError for a cut stream, struct.error and
#: ValueError for broken headers).
DAMAGED = (
    OSError,
    EOFError,
    lzma.LZMAError,
    zipfile.BadZipFile,
    zlib.error,
    struct.error,
    ValueError,
    IndexError,
)


def _read_capped(stream: io.BufferedIOBase, limit: int) -> bytes | None:
    """Everything from ``stream``, or None once more than ``limit`` bytes came out."""
    chunks: list[bytes] = []
    total = 0
    while True:
        chunk = stream.read(CHUNK)
        if not chunk:
            break
        total += len(chunk)
        if total > limit:
            return None
        chunks.append(chunk)
    data = b"".join(chunks)
    del chunks
    return data


def too_large(p: Path, container: str, limit: int, why: str) -> InputError:
    size = p.stat().st_size
    if why == "memory":
        text = (
            f"the {container} archive expands to more than {limit / 2**30:.2g} GiB, "
            "a third of the memory available"
        )
        hint = "decompress and split the log by hand, or use a machine with more memory"
    else:
        text = (
            f"the {container} archive expands to more than {limit / max(size, 1):.0f} times "
            f"its size of {size:,} bytes (a decompression bomb?)"
        )
        hint = "if the archive is genuine, pass --max-expansion with a larger ratio, e.g. 1000"
    return InputError(text, path=str(p), hint=hint)


def _zip_member(zf: zipfile.ZipFile, p: Path) -> zipfile.ZipInfo:
    """The one file of a zip archive, checked for what zipfile cannot read."""
    infos = [i for i in zf.infolist() if not i.is_dir()]
    if len(infos) != 1:
        raise InputError(
            f"zip archive holds {len(infos)} files, expected exactly one",
            path=str(p),
            hint="extract the log you want and give its path",
        )
    info = infos[0]
    if info.flag_bits & 0x1:
        raise InputError(
            f"the zip member {info.filename!r} is encrypted (password protected)",
            path=str(p),
            hint="extract it with its password and give the path of the log",
        )
    known = (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED, zipfile.ZIP_BZIP2, zipfile.ZIP_LZMA)
    if info.compress_type not in known:
        raise InputError(
            f"the zip member {info.filename!r} uses compression method {info.compress_type}, "
            "which this reader cannot decompress (stored, deflate, bzip2 and LZMA can be read)",
            path=str(p),
            hint="extract it with the tool that made it and give the path of the log",
        )
    return info


def decompress(
    p: Path, container: str, max_expansion: float | None = None
) -> tuple[bytes, str | None]:
    """The decompressed bytes of an archive (streamed, capped) and the zip member's name.

    The expanded size is capped (:func:`stability.ingest.limits.expansion_limit`)
    so that a decompression bomb is refused instead of exhausting memory.
    """
    limit, why = expansion_limit(p.stat().st_size, max_expansion)
    member = None
    try:
        if container == "zip":
            with zipfile.ZipFile(p) as zf:
                info = _zip_member(zf, p)
                member = info.filename
                if info.file_size > limit:  # zipfile never gives more than it declares
                    raise too_large(p, container, limit, why)
                with zf.open(info) as fh:
                    data = _read_capped(fh, limit)
        else:
            opener = {"gzip": gzip.open, "bz2": bz2.open, "xz": lzma.open}[container]
            with opener(p, "rb") as fh:
                data = _read_capped(fh, limit)
    except InputError:
        raise
    except (RuntimeError, NotImplementedError) as exc:  # encryption, methods zipfile lacks
        raise InputError(
            f"cannot decompress the {container} file: {exc}",
            path=str(p),
            hint="decompress it by hand and give the path of the log",
        ) from None
    except DAMAGED as exc:
        raise InputError(
            f"damaged {container} file: {exc}",
            path=str(p),
            hint="check the file or decompress it by hand",
        ) from None
    if data is None:
        raise too_large(p, container, limit, why)
    return data, member


def read_plain(p: Path) -> bytes:
    try:
        return p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", path=str(p)) from None


def valid_utf8(data: bytes) -> bool:
    """Whether ``data`` is UTF-8, checked in pieces (no copy of the whole text is made)."""
    if not data or int(np.frombuffer(data, dtype=np.uint8).max()) < 0x80:
        return True  # pure ASCII
    decoder = codecs.getincrementaldecoder("utf-8")()
    view = memoryview(data)
    try:
        for start in range(0, len(data), CHUNK):
            decoder.decode(view[start : start + CHUNK])
        decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        return False
    return True


def valid_utf8_file(p: Path) -> bool:
    """Whether the file is UTF-8, read and checked in pieces (its text is never held whole)."""
    decoder = codecs.getincrementaldecoder("utf-8")()
    buffer = bytearray(4 * CHUNK)  # one buffer, filled again and again
    view = memoryview(buffer)
    try:
        with open(p, "rb", buffering=0) as fh:
            while size := fh.readinto(buffer):  # loop over pieces of four megabytes
                piece = view[:size]
                ascii = buffer.isascii() if size == len(buffer) else bytes(piece).isascii()
                if not ascii or decoder.getstate()[0]:  # ASCII alone is UTF-8
                    decoder.decode(piece)
        decoder.decode(b"", final=True)
    except UnicodeDecodeError:
        return False
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", path=str(p)) from None
    return True


def check_room(p: Path, size: int) -> None:
    """Refuse a plain file whose text cannot be held (twice, while re-encoded) in memory."""
    free = available_bytes()
    if free is not None and 3 * size > free:
        raise InputError(
            f"the log is too large for this machine's memory: {size / 2**30:.1f} GiB of text "
            f"to re-encode and {free / 2**30:.1f} GiB available",
            path=str(p),
            hint="convert it to UTF-8 with LF line endings first, or split it into parts",
        )
