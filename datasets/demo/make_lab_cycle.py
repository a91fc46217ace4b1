"""Make the demo log of an oscillator in a room whose air conditioning cycles.

The scenario is invented (see README.md beside this file): the fictional
*Harbour Metrology Lab* moves a second 10 MHz oven-controlled crystal
oscillator, serial HM-OCXO-0522, to a bench in its small instrument room, whose
air conditioning switches on and off about every 20 minutes. A 1 s gate counter
logs the oscillator against the house rubidium for 12 hours, and a temperature
probe on the bench is read with every reading.

``ocxo-aircon-counter.csv.gz``
    ``timestamp`` (ISO 8601 UTC), ``frequency_hz`` (absolute frequency, Hz, 7
    decimals) and ``temperature_C`` (bench temperature, degrees Celsius, 0.01
    resolution), gzip compressed with a zero time stamp.

What is in it (the "truth" the analysis should find):

- frequency offset +1.2e-9;
- white FM of 1e-12 at 1 s and a flicker FM floor of 2e-13, given as the Allan
  deviation each noise alone would have (NIST SP 1065 [1]_), made by
  :func:`stability.simulate.simulate` (Kasdin and Walter [2]_);
- the room temperature: 21.5 degC plus an asymmetric air-conditioning cycle of
  1210 s (cooling for a third of the cycle, warming slowly for the rest, about
  0.6 K peak to peak), a slow swing of 0.3 K over the night, and probe noise of
  0.01 K;
- the oscillator follows the temperature through a thermal lag of 180 s with a
  sensitivity of -6e-12 per kelvin.

Usage::

    python datasets/demo/make_lab_cycle.py [--out DIR]

References
----------
.. [1] W. J. Riley, *Handbook of Frequency Stability Analysis*, NIST Special
   Publication 1065 (2008), section 5.2 (power-law noise).
.. [2] N. J. Kasdin, T. Walter, "Discrete simulation of power law noise",
   Proc. 1992 IEEE Frequency Control Symposium, pp. 274-283.
"""

from __future__ import annotations

import argparse
import gzip
import math
import sys
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from stability.environment import lagged
from stability.files import atomic_write_bytes, ensure_folder
from stability.simulate import h_from_deviation, simulate

__all__ = ["AIRCON_NAME", "aircon_log", "make_lab_cycle", "main", "TRUTH"]

AIRCON_NAME = "ocxo-aircon-counter.csv.gz"
NOMINAL_HZ = 10e6
START = np.datetime64("2026-03-09T19:00:00", "s")
HOURS = 12.0
SEED = 20260309
#: What the log holds, for the README and the tests.
TRUTH = {
    "period_s": 1210.0,
    "coefficient_per_K": -6.0e-12,
    "lag_s": 180.0,
    "white_fm_1s": 1.0e-12,
    "flicker_fm": 2.0e-13,
}


def _room(t: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Bench temperature in degC: the air-conditioning cycle, a night swing, probe noise."""
    phase = (t / TRUTH["period_s"]) % 1.0
    cool = 1.0 / 3.0
    # cooling falls 0.6 K in the first third, warming climbs back over the rest
    cycle = np.where(
        phase < cool, 0.3 - 0.6 * phase / cool, -0.3 + 0.6 * (phase - cool) / (1 - cool)
    )
    night = 0.15 * np.cos(2.0 * math.pi * t / (HOURS * 3600.0))
    return 21.5 + cycle + night + rng.normal(0.0, 0.01, t.size)


def aircon_log(*, seed: int = SEED) -> str:
    """Text of the log: ``timestamp,frequency_hz,temperature_C``."""
    n = int(HOURS * 3600)
    rng = np.random.default_rng(seed)
    levels = {
        0: h_from_deviation(0, TRUTH["white_fm_1s"], 1.0),
        -1: h_from_deviation(-1, TRUTH["flicker_fm"], 1.0),
    }
    noise = simulate(n, 1.0, levels=levels, seed=rng)
    t = np.arange(n, dtype=np.float64)
    room = _room(t, rng)
    effect = TRUTH["coefficient_per_K"] * (lagged(room, 1.0, TRUTH["lag_s"]) - 21.5)
    y = 1.2e-9 + effect + noise
    stamps = np.char.add(np.datetime_as_string(START + np.arange(n).astype("timedelta64[s]")), "Z")
    freq = np.char.mod("%.7f", NOMINAL_HZ * (1.0 + y))
    temp = np.char.mod("%.2f", np.round(room, 2))
    rows = np.char.add(np.char.add(np.char.add(np.char.add(stamps, ","), freq), ","), temp)
    return "timestamp,frequency_hz,temperature_C\n" + "\n".join(rows.tolist()) + "\n"


def make_lab_cycle(out: str | Path) -> Path:
    """Write the log into ``out`` (created when missing); return its path."""
    folder = ensure_folder(out)
    data = gzip.compress(aircon_log().encode("ascii"), compresslevel=9, mtime=0)
    return atomic_write_bytes(folder / AIRCON_NAME, data)


def main(argv: Sequence[str] | None = None) -> int:
    """Command-line entry: ``python datasets/demo/make_lab_cycle.py [--out DIR]``."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=str(Path(__file__).resolve().parent))
    args = parser.parse_args(argv)
    print(make_lab_cycle(args.out))
    return 0


if __name__ == "__main__":
    sys.exit(main())
