"""Make the README's gallery: the demo's figures as small PNG files beside this script.

Run from anywhere (the repository's ``stability`` package must be importable):

    python docs/gallery/make_gallery.py                  # the demo logs of datasets/demo
    python docs/gallery/make_gallery.py --data DIR       # logs made by make_demo.py elsewhere

It analyses the two invented demo logs the way ``stability demo`` does
(:data:`COUNTER_SETTINGS`, :data:`PPS_SETTINGS`, the same as the demo command's),
draws their figures and the first two pages of the calibration record, and writes
each as a PNG of at most about 150 kB (drawn at a modest resolution and stored with
an adaptive palette), so the gallery stays small in the repository.
"""

from __future__ import annotations

import argparse
import io
import os
import sys
from pathlib import Path

from PIL import Image

from stability.causes import CauseSettings, periodic_marks, run_with_causes
from stability.dynamic import dynamic_stability
from stability.figures import run_series_figure, stability_figure, timeline_figure
from stability.reports.record import build_record, record_pages
from stability.run import run_analysis
from stability.spec import judge, load_info, load_spec
from stability.workflow import environment_drawing, spectrum_drawing

HERE = Path(__file__).resolve().parent
DEMO = HERE.parent.parent / "datasets" / "demo"

#: How the demo analyses the counter log and the 1 PPS log (as cli/demo_cmd.py does).
COUNTER_SETTINGS = {"nominal": "10MHz", "stats": "oadev,mdev,hdev", "drift": "log"}
PPS_SETTINGS = {"stats": "tdev,mtie,oadev", "drift": "none"}
#: The README's worked example on the air-conditioned bench log (section "Where the
#: instability comes from"): the same options as its `stability analyze` command.
AIRCON_LOG = "ocxo-aircon-counter.csv.gz"
AIRCON_CAUSES = {"regress": "temperature", "lag_range": (0.0, 1800.0)}

#: Resolution of the gallery's figures (dots per inch) and of the record pages.
FIGURE_DPI, PAGE_DPI = 100, 75
#: Colours kept in each PNG's palette.
COLOURS = 128


def save_small(figure, path: Path, dpi: int) -> int:
    """Write ``figure`` as a palette PNG at ``dpi``; the file's size in bytes."""
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=dpi)
    image = Image.open(buffer).convert("RGB")
    small = image.quantize(colors=COLOURS, method=Image.Quantize.MEDIANCUT)
    small.save(path, format="PNG", optimize=True)
    return path.stat().st_size


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--data", type=Path, default=None, help="folder of the demo logs")
    args = parser.parse_args(argv)
    if args.data is None:  # from the repository, so the figures name the logs by relative path
        os.chdir(DEMO.parent.parent)
        args.data = DEMO.relative_to(DEMO.parent.parent)
    counter = run_analysis(args.data / "ocxo-vs-rb-counter.csv.gz", **COUNTER_SETTINGS)
    pps = run_analysis(args.data / "gnss-rx-vs-rb-pps.csv", **PPS_SETTINGS)
    spec = load_spec(args.data / "spec-example.toml")
    info = load_info(args.data / "info-example.toml")
    # the record's analysis is at the specification's confidence level, as `record` runs it
    judged = run_analysis(
        args.data / "ocxo-vs-rb-counter.csv.gz", **COUNTER_SETTINGS, confidence=spec.confidence
    )
    judgement = judge(judged.table, spec, reference=info.reference)
    record = build_record(judged, judgement, info)
    pages = record_pages(judged, judgement, record)
    warm_up = dynamic_stability(counter.source, window="2h", step="20min", taus=[1, 4, 16, 64])
    figures = {
        "counter-sigma-tau.png": (stability_figure(counter.table,
                                                   model_curve=counter.model_curves()), FIGURE_DPI),
        "counter-series.png": (run_series_figure(counter), FIGURE_DPI),
        "pps-sigma-tau.png": (stability_figure(pps.table, model_curve=pps.model_curves()),
                              FIGURE_DPI),
        "pps-series.png": (run_series_figure(pps), FIGURE_DPI),
        "counter-timeline.png": (timeline_figure(warm_up, title="counter log: stability over "
                                                 "time (warm-up)"), FIGURE_DPI),
        "record-page-1.png": (pages[0], PAGE_DPI),
        "record-page-2.png": (pages[1], PAGE_DPI),
    }  # fmt: skip
    aircon = run_with_causes(args.data / AIRCON_LOG, None, CauseSettings(**AIRCON_CAUSES))
    marks = periodic_marks(aircon.table)
    figures["aircon-sigma-tau.png"] = (
        stability_figure(aircon.table, model_curve=aircon.model_curves(), marks=marks),
        FIGURE_DPI,
    )
    figures["aircon-spectrum.png"] = (spectrum_drawing(aircon), FIGURE_DPI)
    figures["aircon-environment.png"] = (environment_drawing(aircon), FIGURE_DPI)
    for name, (drawn, dpi) in figures.items():
        figure = getattr(drawn, "figure", drawn)
        size = save_small(figure, HERE / name, dpi)
        print(f"{name:24} {size / 1000:6.1f} kB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
