"""Safe output files: atomic writes, overwrite protection, file and settings hashes.

Every output of ``stability`` (tables, summary, plots, calibration record) is
written to a temporary file in the destination folder, flushed to disk and then
renamed over the destination. A rename within one file system is atomic [1]_ [2]_,
so a reader (or a power cut) sees either the old file or the complete new one,
never a partial file. A write that fails midway removes its temporary file and
leaves any old file untouched.

Hashes: :func:`sha256_file` is the SHA-256 of a file's bytes [3]_, the input
fingerprint that every output carries; :func:`settings_hash` is the SHA-256 of
the settings as canonical JSON [4]_ (keys sorted, no spaces), cut to 16 hex
digits, so that two analyses with the same settings carry the same hash.

References
----------
.. [1] IEEE Std 1003.1-2017 (POSIX), ``rename()``: "If the link named by the new
   argument exists, it shall be removed and old renamed to new ... a link named new
   shall remain visible to other threads throughout the renaming operation".
.. [2] Python documentation, ``os.replace``: "If successful, the renaming will be
   an atomic operation (this is a POSIX requirement)".
.. [3] NIST FIPS 180-4, *Secure Hash Standard* (2015), SHA-256.
.. [4] RFC 8259, *The JavaScript Object Notation (JSON) Data Interchange Format* (2017).
"""

from __future__ import annotations

import contextlib
import dataclasses
import errno
import hashlib
import json
import math
import os
import stat
import tempfile
import threading
from collections.abc import Iterator, Mapping
from datetime import UTC, date, datetime
from pathlib import Path
from typing import IO, Any

import numpy as np

from .errors import InputError

__all__ = [
    "atomic_output",
    "atomic_write_bytes",
    "atomic_write_text",
    "ensure_folder",
    "refuse_overwrite",
    "sha256_file",
    "special_file",
    "settings_hash",
    "jsonable",
]

_MODES = ("w", "wb")
_CHUNK = 1 << 20
_umask_lock = threading.Lock()


def _current_umask() -> int:
    # os.umask can only be read by setting it; do so under a lock and restore it at once.
    with _umask_lock:
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


def _validate_output_path(path: Any, what: str = "path") -> Path:
    if not isinstance(path, (str, os.PathLike)):
        raise InputError(f"{what} must be a file path (str or Path), got {type(path).__name__}")
    target = Path(path)
    if str(target) in ("", "."):
        raise InputError(f"{what} must name a file, got {str(path)!r}")
    if target.is_dir():
        raise InputError(
            "is a folder, not a file",
            path=str(target),
            hint="give a file name inside the folder",
        )
    folder = target.parent
    if not folder.is_dir():
        raise InputError(
            "the output folder does not exist",
            path=str(folder),
            hint="create it first or pass another --out",
        )
    return target


def ensure_folder(path: str | os.PathLike[str]) -> Path:
    """Create a folder (and its parents) when missing; return it as a Path.

    Raises
    ------
    InputError
        When the path exists and is not a folder, or cannot be created.
    """
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise InputError("exists and is not a folder", path=str(folder), hint="pass another --out")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(
            f"cannot create the output folder: {exc.strerror or exc}",
            path=str(folder),
            hint="pass a writable --out",
        ) from None
    return folder


def refuse_overwrite(path: str | os.PathLike[str], force: bool) -> None:
    """Raise :class:`InputError` when ``path`` exists and ``force`` is false."""
    target = Path(path)
    if target.exists() and not force:
        raise InputError(
            "exists already and is not overwritten",
            path=str(target),
            hint="pass --force to overwrite it",
        )


def _fsync_folder(folder: Path) -> None:
    # Make the rename itself durable; not every platform lets a folder be opened.
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


@contextlib.contextmanager
def atomic_output(
    path: str | os.PathLike[str], mode: str = "w", *, encoding: str = "utf-8"
) -> Iterator[IO[Any]]:
    """Write a file atomically: yield a temporary file beside ``path``, rename it on success.

    Parameters
    ----------
    path
        The destination file. Its folder must exist (see :func:`ensure_folder`).
    mode
        ``"w"`` (text, newline ``\\n``) or ``"wb"`` (bytes).
    encoding
        Text encoding for mode ``"w"``.

    Yields
    ------
    file object
        Open on a temporary file in the destination folder.

    Notes
    -----
    On leaving the block normally the file is flushed, fsynced, given the usual
    permissions (0666 less the umask) and renamed over ``path``. On any
    exception the temporary file is removed, the old ``path`` is left as it was,
    and the exception propagates.
    """
    if mode not in _MODES:
        raise InputError(f"mode must be one of {', '.join(_MODES)}, got {mode!r}")
    target = _validate_output_path(path)
    folder = target.parent
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as exc:
        raise InputError(
            f"cannot write in the output folder: {exc.strerror or exc}",
            path=str(folder),
            hint="pass a writable --out",
        ) from None
    tmp = Path(tmp_name)
    try:
        if mode == "wb":
            handle: IO[Any] = os.fdopen(fd, "wb")
        else:
            handle = os.fdopen(fd, "w", encoding=encoding, newline="\n")
    except BaseException:
        os.close(fd)
        tmp.unlink(missing_ok=True)
        raise
    try:
        with handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, 0o666 & ~_current_umask())
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    _fsync_folder(folder)


def atomic_write_text(path: str | os.PathLike[str], text: str, *, encoding: str = "utf-8") -> Path:
    """Write ``text`` to ``path`` atomically (see :func:`atomic_output`); return the path."""
    if not isinstance(text, str):
        raise InputError(f"text must be a str, got {type(text).__name__}")
    with atomic_output(path, "w", encoding=encoding) as handle:
        handle.write(text)
    return Path(path)


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_output`); return the path."""
    if not isinstance(data, (bytes, bytearray, memoryview)):
        raise InputError(f"data must be bytes, got {type(data).__name__}")
    with atomic_output(path, "wb") as handle:
        handle.write(data)
    return Path(path)


def special_file(path: str | os.PathLike[str]) -> str | None:
    """Why ``path`` is no regular file to read, or None (also None when it is missing
    or a folder, which the caller words itself).

    A device (``/dev/zero``) or a named pipe may never end and a socket cannot be
    read; a symbolic link loop is named as such, not as a missing file (IEEE Std
    1003.1, ``ELOOP``).
    """
    try:
        mode = os.stat(path).st_mode
    except OSError as exc:
        return "a symbolic link loop" if exc.errno == errno.ELOOP else None
    if stat.S_ISREG(mode) or stat.S_ISDIR(mode):
        return None
    if stat.S_ISFIFO(mode):
        return "a named pipe, not a regular file"
    return "a socket, not a regular file" if stat.S_ISSOCK(mode) else "a device, not a file"


def sha256_file(path: str | os.PathLike[str]) -> str:
    """Hex SHA-256 of a file's bytes, read in 1 MiB chunks."""
    source = Path(path)
    digest = hashlib.sha256()
    try:
        with open(source, "rb") as handle:
            while chunk := handle.read(_CHUNK):
                digest.update(chunk)
    except FileNotFoundError:
        raise InputError("no such file", path=str(source), hint="check the path") from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", path=str(source)) from None
    except OSError as exc:
        raise InputError(f"cannot read: {exc.strerror or exc}", path=str(source)) from None
    return digest.hexdigest()


def jsonable(value: Any) -> Any:
    """A copy of ``value`` made of JSON types only (strict JSON: NaN and inf become None).

    numpy scalars and arrays, tuples, sets, paths, dates (ISO 8601), dataclasses
    and objects with ``to_dict()`` are converted; anything else becomes its ``str``.
    """
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        number = float(value)
        return number if math.isfinite(number) else None
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, np.ndarray):
        return [jsonable(v) for v in value.tolist()]
    if isinstance(value, Mapping):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        items = sorted(value, key=str) if isinstance(value, (set, frozenset)) else value
        return [jsonable(v) for v in items]
    if isinstance(value, datetime):
        if value.tzinfo is not None:
            value = value.astimezone(UTC)
        return value.isoformat()
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, os.PathLike):
        return os.fspath(value)
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return jsonable(dataclasses.asdict(value))
    to_dict = getattr(value, "to_dict", None)
    if callable(to_dict):
        return jsonable(to_dict())
    try:
        import pandas as pd

        if value is pd.NA or value is pd.NaT:
            return None
    except ImportError:  # pragma: no cover - pandas is a dependency
        pass
    return str(value)


def settings_hash(settings: Mapping[str, Any]) -> str:
    """First 16 hex digits of the SHA-256 of the settings as canonical JSON.

    Canonical JSON: :func:`jsonable` values, keys sorted, separators ``,`` and
    ``:``, ASCII only; so equal settings give equal hashes whatever their order.
    """
    if not isinstance(settings, Mapping):
        raise InputError(f"settings must be a mapping, got {type(settings).__name__}")
    text = json.dumps(
        jsonable(settings),
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=True,
        allow_nan=False,
    )
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:16]
