"""Results show themselves in a notebook: valid HTML holding the key figures, escaped text.

Each ``_repr_html_`` is parsed with :mod:`html.parser` and checked for nesting
(every element closed in order) and for the figures a reader looks for. The
results table must show what ``table.md`` shows (the same rounded cells, the
same units). Data: invented noise, the demo specification and the demo calibration
history (invented), and a log whose path holds markup.
"""

from __future__ import annotations

import glob
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

import stability
from stability.figures.style import VERDICT_COLORS
from stability.history import import_records, open_history, review_device
from stability.measurement import Measurement, Provenance
from stability.reports import html as html_display
from stability.reports.tables import format_tau, format_value, people_rows
from stability.spec import judge, load_info, load_spec
from stability.workflow import RecordOutcome

DEMO = Path(__file__).resolve().parents[1] / "datasets" / "demo"
_VOID = {"br", "hr", "img", "meta", "link", "input", "col", "wbr"}


class _Checker(HTMLParser):
    """Collects the text and fails on an element closed out of order or left open."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.text: list[str] = []
        self.tags: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag not in _VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def parsed(fragment: str) -> tuple[str, list[str]]:
    """(the text a reader sees, the tags), after checking the fragment is well formed."""
    assert isinstance(fragment, str) and fragment.startswith("<div")
    checker = _Checker()
    checker.feed(fragment)
    checker.close()
    assert checker.stack == [], f"left open: {checker.stack}"
    return " ".join(" ".join(checker.text).split()), checker.tags


@pytest.fixture(scope="module")
def table():
    y = np.random.default_rng(11).normal(0, 1e-11, 4096)
    y[1000:1010] = np.nan
    m = Measurement.from_frequency(y, 1.0, notes=["ten readings lost to a counter restart"])
    return stability.analyze(m, stats="oadev,mdev,tdev", taus="octave")


def test_measurement_html_holds_source_kind_n_tau0_span_gaps_and_notes(table):
    m = table.measurement
    text, tags = parsed(m._repr_html_())
    for part in ("Measurement", "made in memory", "frequency", f"{m.n} phase samples",
                 "tau0 1 s", "span 68.3 min", "gaps 10 missing",
                 "ten readings lost to a counter restart"):  # fmt: skip
        assert part in text, (part, text)
    assert "table" in tags and "li" in tags


def test_text_from_a_file_is_escaped():
    prov = Provenance(path="<script>alert(1)</script>.csv", sha256="ab" * 32, reader="csv & co")
    m = Measurement.from_phase(np.arange(10.0) * 1e-9, 1.0, provenance=prov, notes=["a < b"])
    fragment = m._repr_html_()
    assert "<script>" not in fragment
    assert "&lt;script&gt;alert(1)&lt;/script&gt;.csv" in fragment
    text, tags = parsed(fragment)
    assert "script" not in tags
    assert "<script>alert(1)</script>.csv" in text and "a < b" in text and "csv & co" in text


def test_table_html_shows_the_rows_of_table_md_with_units(table):
    text, tags = parsed(table._repr_html_())
    header, rows = people_rows(table)
    assert tags.count("tr") == len(rows) + 1
    for cell in [*header, *(c for row in rows for c in row)]:
        assert cell in text
    # the figures a reader looks for: the first OADEV, and TDEV with a time unit
    oadev = table["oadev"]
    assert format_value(float(oadev.deviation[0])) in text
    tdev = table["tdev"]
    tdev_text = format_value(float(tdev.deviation[0]), "s")
    assert tdev_text.endswith("s") and tdev_text in text
    assert f"{format_tau(float(tdev.tau[-1]))}" in text
    assert "68.3 % interval" in text


def test_plain_text_display_is_the_terminal_table(table):
    text = stability.display.text(table)
    assert text.splitlines()[0].startswith("Stability table: oadev, mdev, tdev")
    assert "68.3 % interval" in text


def test_judgement_html_shows_each_verdict_in_its_colour(table):
    judgement = judge(table, load_spec(DEMO / "spec-example.toml"))
    fragment = judgement._repr_html_()
    text, tags = parsed(fragment)
    assert f"overall: {judgement.overall.value}" in text
    for check in judgement.checks:
        assert format_tau(check.tau_s) in text
        word = check.verdict.value
        badge = f"background:{VERDICT_COLORS[word]};color:#ffffff;"
        assert f'{badge}padding:0 5px;border-radius:3px">{word}' in fragment
    assert "95 % interval" in text
    assert "accredited procedure" in text  # the caution of the record
    assert judgement.overall.value in stability.display.text(judgement)


def test_run_html_holds_measurement_preparation_and_table():
    y = np.random.default_rng(2).normal(0, 1e-11, 2048) + 1e-15 * np.arange(2048)
    run = stability.run_analysis(Measurement.from_frequency(y, 1.0), drift="linear", stats="oadev")
    text, _ = parsed(run._repr_html_())
    assert "Analysis run" in text and "drift removed linear" in text
    assert "Stability table: oadev" in text and "2049 phase samples" in text


def test_studies_show_their_figures():
    rng = np.random.default_rng(8)
    y = {k: v * rng.standard_normal(1024) for k, v in {"A": 1e-11, "B": 2e-11, "C": 5e-12}.items()}
    pairs = {
        (a, b): Measurement.from_frequency(y[a] - y[b], 1.0)
        for a, b in (("A", "B"), ("B", "C"), ("C", "A"))
    }
    hat = stability.separate(pairs, stat="oadev")
    text, _ = parsed(hat._repr_html_())
    assert "Three-cornered hat: OADEV of A, B, C" in text
    osc = hat["B"]
    assert format_value(float(osc.deviation[0])) in text
    plain = stability.display.text(hat)
    assert plain.startswith("Three-cornered hat") and format_value(float(osc.deviation[0])) in plain

    conversion = stability.phase_noise_to_stability(
        [1.0, 10.0, 100.0], [-100.0, -120.0, -130.0], nominal=1e7, f_h=100.0,
        taus=[0.1, 1.0], stats=["adev"],
    )  # fmt: skip
    text, _ = parsed(conversion._repr_html_())
    assert "carrier 10 MHz" in text and format_value(float(conversion["adev"][0])) in text
    assert "carrier: 10 MHz" in stability.display.text(conversion)

    dynamic = stability.dynamic_stability(
        Measurement.from_frequency(rng.normal(0, 1e-11, 1200), 1.0),
        window=300.0, step=100.0, taus=[1.0, 4.0],
    )  # fmt: skip
    text, _ = parsed(dynamic._repr_html_())
    assert f"{dynamic.shape[0]} windows x 2 taus" in text
    first = dynamic.deviation[:, 0]
    assert format_value(float(np.nanmin(first))) in text
    assert format_value(float(np.nanmin(first))) in stability.display.text(dynamic)


def test_device_review_html_lists_every_calibration(tmp_path):
    with open_history(tmp_path / "history.sqlite") as store:
        import_records(store, sorted(glob.glob(str(DEMO / "history" / "*.json"))))
        review = review_device(store, "HM-OCXO-0417", tolerance=1e-8)
    fragment = review._repr_html_()
    text, tags = parsed(fragment)
    assert "Calibration history of HM-OCXO-0417" in text
    facts = 5 + (review.at_due is not None) + (review.within is not None)
    assert tags.count("tr") == facts + 1 + len(review.calibrations)
    for c in review.calibrations:
        assert c.when.date().isoformat() in text
        if c.offset is not None:
            assert f"{c.offset:.4g}" in text
    assert f"due {review.due.date().isoformat()}" in text
    plain = stability.display.text(review)
    assert plain.startswith("Calibration history of HM-OCXO-0417")
    assert len(plain.splitlines()) == 1 + facts + len(review.calibrations)


def test_log_report_and_preparation_show_what_the_commands_print():
    report = stability.inspect_log(DEMO / "ocxo-vs-rb-counter.csv.gz", nominal="10MHz")
    text, tags = parsed(report._repr_html_())
    assert "pre" in tags and "What is in the log" in text
    assert report.sha256 in text and "nominal 10 MHz" in text
    assert stability.display.text(report) == report.to_text()

    y = np.random.default_rng(6).normal(0, 1e-11, 1000) + 1e-14 * np.arange(1000)
    y[500] = 5e-9  # one outlier, five robust sigmas and far beyond
    _, prep = stability.prepare_measurement(Measurement.from_frequency(y, 1.0), drift="linear")
    text, _ = parsed(prep._repr_html_())
    assert "outliers removed 1" in text and "drift removed linear" in text
    for note in prep.notes:
        assert " ".join(note.split()) in text
    assert stability.display.text(prep).startswith("Preparation")


def test_a_long_table_shows_its_first_and_last_rows():
    m = Measurement.from_frequency(np.random.default_rng(9).normal(0, 1e-11, 400), 1.0)
    table = stability.analyze(m, stats="oadev", taus="all")
    _, rows = people_rows(table)
    assert len(rows) > html_display.HTML_ROWS
    text, tags = parsed(table._repr_html_())
    assert tags.count("tr") == 1 + 60 + 1 + 20
    assert f"{len(rows) - 80} rows not shown; to_frame() holds every row." in text
    for row in (rows[0], rows[-1]):
        assert " ".join(" ".join(row).split()) in text


def test_record_outcome_shows_where_the_record_went_and_its_verdicts(tmp_path):
    y = np.random.default_rng(12).normal(0, 1e-12, 2000)
    run = stability.run_analysis(Measurement.from_frequency(y, 1.0), stats="oadev")
    judgement = judge(run.table, load_spec(DEMO / "spec-example.toml"))
    files = {name: tmp_path / name for name in ("record.pdf", "record.json", "table.md")}
    outcome = RecordOutcome(
        run, judgement, load_info(DEMO / "info-example.toml"), DEMO / "spec-example.toml", files
    )
    text, _ = parsed(outcome._repr_html_())
    assert "Calibration record" in text and "device HM-OCXO-0417" in text
    assert "files record.json, record.pdf, table.md" in text and str(tmp_path) in text
    assert f"overall: {judgement.overall.value}" in text
    assert stability.display.text(outcome).startswith("Calibration record")


def test_time_error_analysis_shows_metrics_verdicts_margins_and_the_caution(tmp_path):
    from stability.timing import MASK_CAUTION, analyze_time_error, read_mask_text

    rng = np.random.default_rng(14)  # invented: 2 ns white phase over a slow 5 ns wander
    k = np.arange(6000)
    x = 30e-9 + 5e-9 * np.sin(2 * np.pi * k / 3600) + 2e-9 * rng.standard_normal(k.size)
    result = analyze_time_error(Measurement.from_phase(x, 1.0), mask="g8272-prtc-b")
    fragment = result._repr_html_()
    text, tags = parsed(fragment)
    assert "Time-error analysis: 6000 samples at 1 s" in text and "table" in tags
    for name, value, _ in result.metrics.rows():
        assert f"{name} {format_value(value, 's')}" in text, name
    j = result.judgement
    assert "mask g8272-prtc-b" in text and f"verdict: {j.verdict}" in text
    word = str(j.verdict)
    assert f'color:{VERDICT_COLORS[word]};font-weight:bold">{word}' in fragment
    for name in ("mtie", "tdev"):
        least = j.least_margin(name)
        assert f"{least.margin:.3g}" in text and format_tau(least.tau) in text
        badge = f"background:{VERDICT_COLORS[str(j.verdict_of(name))]};color:#ffffff;"
        assert badge in fragment
    assert "from memory" in text and " ".join(MASK_CAUTION.split()) in text
    plain = stability.display.text(result)
    assert plain.startswith("Time-error analysis\ntime error of 6000 samples")
    assert f"verdict: {j.verdict}" in plain and "least margin" in plain
    assert "limits: from memory" in plain and plain.rstrip().endswith(MASK_CAUTION)
    # no mask: the metrics alone; a mask's own words are escaped
    bare = parsed(analyze_time_error(Measurement.from_phase(x, 1.0))._repr_html_())[0]
    assert "No mask was judged" in bare and "max|TE|" in bare
    own = read_mask_text(
        'name = "<b>house</b>"\ntitle = "a & b"\n[[curve]]\nstatistic = "tdev"\nunit = "ns"\n'
        "segment = [ { from = 1, to = 1000, limit = 20 } ]\n",
        "house.toml",
    )
    fragment = analyze_time_error(Measurement.from_phase(x, 1.0), mask=own)._repr_html_()
    assert "<b>house</b>" not in fragment and "&lt;b&gt;house&lt;/b&gt;" in fragment
    assert "a &amp; b" in fragment
    parsed(fragment)
