"""Where the calibration history lives: ``--history FILE``, ``STABILITY_HISTORY``, or the default.

The rule (also in the README):

* ``stability record`` stores its record in a history only when asked: with
  ``--history FILE``, or when the environment variable ``STABILITY_HISTORY``
  is set (to a file). ``--history`` wins over the variable.
* ``stability history`` reads ``--history FILE``, else ``STABILITY_HISTORY``,
  else the default location.
* The word ``default`` (as FILE or as the variable's value) names the default
  location: ``$XDG_DATA_HOME/stability/history.sqlite``, or
  ``~/.local/share/stability/history.sqlite`` when ``XDG_DATA_HOME`` is unset or
  not an absolute path (the XDG Base Directory Specification [1]_).

References
----------
.. [1] XDG Base Directory Specification 0.8,
   https://specifications.freedesktop.org/basedir-spec/ (``XDG_DATA_HOME``).
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

__all__ = ["ENV_VAR", "DEFAULT_WORD", "default_location", "history_for_record", "history_to_read"]

ENV_VAR = "STABILITY_HISTORY"
DEFAULT_WORD = "default"


def default_location(env: Mapping[str, str] | None = None) -> Path:
    """``$XDG_DATA_HOME/stability/history.sqlite``, else under ``~/.local/share``."""
    env = os.environ if env is None else env
    base = env.get("XDG_DATA_HOME", "")
    if not base or not os.path.isabs(base):
        home = env.get("HOME") or str(Path.home())
        base = os.path.join(home, ".local", "share")
    return Path(base) / "stability" / "history.sqlite"


def _named(value: str | os.PathLike[str], env: Mapping[str, str]) -> Path:
    if str(value).strip().lower() == DEFAULT_WORD:
        return default_location(env)
    return Path(value).expanduser()


def history_for_record(
    given: str | os.PathLike[str] | None, env: Mapping[str, str] | None = None
) -> Path | None:
    """The history a record is stored in: ``given``, else ``$STABILITY_HISTORY``, else None."""
    env = os.environ if env is None else env
    if given is not None and str(given).strip():
        return _named(given, env)
    value = env.get(ENV_VAR, "")
    return _named(value, env) if value.strip() else None


def history_to_read(
    given: str | os.PathLike[str] | None, env: Mapping[str, str] | None = None
) -> Path:
    """The history ``stability history`` works on: as for a record, else the default location."""
    env = os.environ if env is None else env
    chosen = history_for_record(given, env)
    return chosen if chosen is not None else default_location(env)
