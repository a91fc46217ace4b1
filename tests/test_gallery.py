"""The README's gallery: small PNG files made by the script beside them, as the demo runs.

The gallery (docs/gallery/) shows the demo's figures; the test holds it to what the
README promises: every picture the README shows is there, is a PNG of under 150 kB,
and was made with the demo command's own settings (so it shows what ``stability demo``
draws).
"""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

from PIL import Image

from stability_cli import demo_cmd

ROOT = Path(__file__).resolve().parents[1]
GALLERY = ROOT / "docs" / "gallery"


def _script():
    spec = importlib.util.spec_from_file_location("make_gallery", GALLERY / "make_gallery.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_the_readme_shows_small_pictures_that_exist():
    shown = re.findall(
        r"!\[[^\]]*\]\((docs/gallery/[^)]+\.png)\)", (ROOT / "README.md").read_text()
    )
    assert len(shown) >= 6
    for name in shown:
        path = ROOT / name
        assert path.is_file(), name
        assert path.stat().st_size < 150_000, (name, path.stat().st_size)
        with Image.open(path) as image:
            assert image.format == "PNG" and min(image.size) >= 300, (name, image.size)
    assert sorted(p.name for p in GALLERY.glob("*.png")) == sorted(Path(n).name for n in shown)


def test_the_gallery_is_made_as_the_demo_runs():
    script = _script()
    assert script.COUNTER_SETTINGS == demo_cmd.COUNTER_SETTINGS
    assert script.PPS_SETTINGS == demo_cmd.PPS_SETTINGS
