"""Benchmark: what one update of ``stability watch`` costs, against reading the whole log again.

Writes a counter log of ``10**6 * scale`` one-second readings (ISO 8601 stamps,
10 MHz readings), feeds all but the last lines to a
:class:`stability.live.growing.GrowingLog`, then times one update: the last
``new`` lines arrive and the measurement is built (parsing only the new lines,
then joining the rows and placing them on the grid). Beside it:

* ``read_log`` of the whole file (what a watcher that re-read the file would do);
* the statistics that follow (``stability.analyze`` with OADEV and MDEV) on
  the same measurement, which every update runs anyway.

Prints each time (median of 5) and the ratios update / read_log and
update / statistics. Run by hand::

    python tests/benchmarks/bench_watch.py 1.0     # 10**6 rows, 1000 new lines
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from stability import analyze
from stability.ingest import read_log, validate_read_args
from stability.live.growing import GrowingLog

__all__ = ["main"]


def _log(n: int) -> bytes:
    rng = np.random.default_rng(11)
    stamps = np.datetime64("2026-03-04T22:00:00", "s") + np.arange(n).astype("timedelta64[s]")
    values = np.char.mod("%.6f", 10e6 + 1e-4 * rng.standard_normal(n))
    rows = np.char.add(np.char.add(np.datetime_as_string(stamps, unit="s"), "Z,"), values)
    return ("time_utc,frequency_hz\n" + "\n".join(rows.tolist()) + "\n").encode()


def _median(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main(scale: float = 1.0) -> None:
    n = max(300, int(1e6 * scale))
    new = max(10, min(1000, n // 10))
    data = _log(n)
    cut = len(data)
    for _ in range(new):
        cut = data.rindex(b"\n", 0, cut - 1) + 1 if cut > 1 else cut
    head, tail = data[:cut], data[cut:]
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "counter.csv"
        path.write_bytes(data)
        hints = validate_read_args()

        def update() -> None:
            g = state["g"]
            g.extend(tail)
            g.measurement()

        def prepare() -> None:
            g = GrowingLog(str(path), hints)
            g.extend(head)
            g.measurement()
            state["g"] = g

        state: dict = {}
        times = []
        for _ in range(5):
            prepare()
            t = time.perf_counter()
            update()
            times.append(time.perf_counter() - t)
        t_update = statistics.median(times)
        parsed = state["g"].last_parsed_bytes
        t_read = _median(lambda: read_log(path))
        m = read_log(path)
        t_stats = _median(lambda: analyze(m, stats="oadev,mdev"), repeat=3)
    print(f"log of {n} rows ({len(data) / 1e6:.1f} MB), update of {new} new lines")
    print(f"  bytes parsed by the update   {parsed} of {len(data)}")
    print(f"  update (new lines -> Measurement)  {t_update * 1e3:9.1f} ms")
    print(f"  read_log of the whole file         {t_read * 1e3:9.1f} ms")
    print(f"  statistics (oadev, mdev)           {t_stats * 1e3:9.1f} ms")
    print(f"  ratio update / read_log            {t_update / t_read:9.3f}")
    print(f"  ratio update / statistics          {t_update / t_stats:9.3f}")


if __name__ == "__main__":
    main(float(sys.argv[1]) if len(sys.argv) > 1 else 1.0)
