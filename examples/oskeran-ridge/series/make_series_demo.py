"""Make the fictional observatory records of the Oskeran Ridge time-series demo (invented numbers).

Twenty-four daily downloads of a vent-temperature logger in the Gildhorn orifice (one sample every 5 minutes)
and of a three-sensor thermistor array over a diffuse patch, with a tidal modulation (M2 and K1) and one step:
on day 15.3 the orifice cools by 8 K (an invented event). One array file has a dead sensor and one download is
corrupt, to show how the run reports them. Run: ``python make_series_demo.py`` (writes ``records/`` and
``items.csv`` beside this script); deterministic.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
START = np.datetime64("2026-03-01T00:00:00")
DAYS = 24
STEP_DAY = 15.3
M2_H, K1_H = 12.4206, 23.9345  # tidal periods, hours (from memory)


def main() -> None:
    rng = np.random.default_rng(20260301)
    rec = HERE / "records"
    rec.mkdir(exist_ok=True)
    items = ["vent,file"]
    for day in range(DAYS):
        t_h = day * 24 + np.arange(0, 24, 5 / 60)  # hours since start
        times = START + (t_h * 3600).astype("timedelta64[s]")
        stamp = [str(t) + "Z" for t in times]
        d = t_h / 24
        tide = np.cos(2 * np.pi * t_h / M2_H) * 3.0 + np.cos(2 * np.pi * t_h / K1_H + 0.7) * 1.5
        T = 331.0 + tide - 8.0 * (d >= STEP_DAY) + rng.normal(0, 0.4, t_h.size)
        name = f"gildhorn_logger_day{day + 1:02d}.csv"
        (rec / name).write_text("time,temperature [degC]\n" + "".join(
            f"{s},{v:.3f}\n" for s, v in zip(stamp, T)))
        items.append(f"Gildhorn,records/{name}")
        anomaly = 4.0 + 1.0 * np.cos(2 * np.pi * t_h / M2_H + 0.4)
        sensors = anomaly[:, None] + rng.normal(0, 0.15, (t_h.size, 3))
        if day == 9:
            sensors[:, 2] = np.nan  # a dead sensor on the tenth download
        name = f"lantern_array_day{day + 1:02d}.csv"
        rows = "".join(f"{s}," + ",".join("" if np.isnan(x) else f"{x:.3f}" for x in r) + "\n"
                       for s, r in zip(stamp, sensors))
        (rec / name).write_text("time,A1 [K],A2 [K],A3 [K]\n" + rows)
        items.append(f"Lantern patch,records/{name}")
    (rec / "gildhorn_logger_corrupt.csv").write_bytes(b"time,temperature [degC]\n\xff\xfe\x00garbled download\n")
    items.append("Gildhorn,records/gildhorn_logger_corrupt.csv")
    (HERE / "items.csv").write_text("\n".join(items) + "\n")


if __name__ == "__main__":
    main()
