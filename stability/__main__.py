"""``python -m stability``: run the command line.

This module is an entry point, not part of the library: no library module
imports it, and it is the one module of the ``stability`` package allowed to
import the command-line package ``stability_cli`` (which sits on top of every
layer). It does what the ``stability`` console script does.
"""

from __future__ import annotations

from stability_cli.entry import main

__all__ = ["main"]

if __name__ == "__main__":
    main()
