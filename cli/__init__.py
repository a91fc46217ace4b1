"""The ``stability`` command line (a typer app), installed as the import package ``stability_cli``.

The repository keeps it in ``cli/``; the packaging maps that folder to
``stability_cli`` (and the demo logs to ``stability_cli/demo_data``). Modules
inside refer to each other relatively, so the package works under either name.
It sits on top of every library layer and nothing in the library imports it,
except the entry point ``stability/__main__.py``.
"""

__all__: list[str] = []
