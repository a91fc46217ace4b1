"""The program's entry point: the console script ``stability`` and ``python -m stability``.

Loading the command line takes a moment (numpy, pandas, matplotlib); a Ctrl-C
in that moment would end in a long traceback. Until the app is loaded, SIGINT,
SIGTERM and SIGHUP print one line and exit with 128 + the signal; after that the
app handles them itself (:func:`stability_cli.common.run_program`).
"""

from __future__ import annotations

import os
import signal
import sys
from types import FrameType

__all__ = ["main"]


def _quit_while_starting(signum: int, frame: FrameType | None) -> None:
    sys.stderr.write("error: interrupted while starting; nothing was done\n")
    sys.stderr.flush()
    os._exit(128 + signum)


_STARTING = (signal.SIGINT, signal.SIGTERM, signal.SIGHUP)
_previous = {signum: signal.signal(signum, _quit_while_starting) for signum in _STARTING}

from .common import raise_interrupted, run_program  # noqa: E402  (under the start-up handler)
from .main import app  # noqa: E402

# From here on the app's own handling: Ctrl-C as usual, SIGTERM/SIGHUP like Ctrl-C.
signal.signal(signal.SIGINT, _previous[signal.SIGINT])
signal.signal(signal.SIGTERM, raise_interrupted)
signal.signal(signal.SIGHUP, raise_interrupted)


def main() -> None:
    """Run the command line."""
    run_program(app)


if __name__ == "__main__":
    main()
