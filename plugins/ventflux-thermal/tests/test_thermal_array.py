"""Diffuse-flow thermistor arrays: anomalies and tidal periods from synthetic records."""

import json

import numpy as np
import pytest

from ventflux.cli import main
from ventflux_thermal.array import array_anomalies, dominant_periods

# Periods of the principal lunar semidiurnal (M2) and lunisolar diurnal (K1) tidal constituents, hours
# (standard tidal constituent tables; values from memory).
M2_H = 12.4206
K1_H = 23.9345


def _synthetic(n_days=30, dt_min=15.0, seed=4, uneven=False):
    rng = np.random.default_rng(seed)
    t = np.arange(0, n_days * 86400, dt_min * 60.0)
    if uneven:
        t = t + rng.uniform(-30, 30, t.size)
        t[0] = 0.0
    ref = 2.05 + 0.01 * np.sin(2 * np.pi * t / (K1_H * 3600)) + rng.normal(0, 2e-3, t.size)
    means = np.array([0.8, 1.5, 3.2, 2.4, 0.5, 1.1])
    amps = np.array([0.3, 0.6, 1.2, 0.9, 0.2, 0.4])
    phase = np.linspace(0, 1.0, means.size)
    dT = (means[:, None] + amps[:, None] * np.sin(2 * np.pi * t[None, :] / (M2_H * 3600) + phase[:, None])
          + 0.3 * amps[:, None] * np.sin(2 * np.pi * t[None, :] / (K1_H * 3600))
          + rng.normal(0, 0.05, (means.size, t.size)))
    return t, ref[None, :] + dT, ref, means


def test_mean_anomalies_and_tidal_period():
    t, T, ref, means = _synthetic()
    names = [f"S{i}" for i in range(6)]
    res = array_anomalies(t, T, ref, names, {"mat": names[:3], "crack": names[3:]})
    # the sinusoids average out over whole cycles to within a few mK: 30 days hold 58 M2 cycles
    np.testing.assert_allclose(res.sensor_mean, means, atol=0.02)
    # Dominant period: the M2 constituent, within the periodogram's resolution P²/T_record ≈ 0.21 h
    assert np.all(np.abs(res.sensor_periods[:, 0] / 3600 - M2_H) < 0.25)
    assert np.all(np.abs(res.sensor_periods[:, 1] / 3600 - K1_H) < 0.8)
    mat = res.patches["mat"]
    assert mat["mean_anomaly_K"] == pytest.approx(means[:3].mean(), abs=0.02)
    assert mat["sensor_spread_K"] == pytest.approx(np.std(means[:3], ddof=1), rel=0.05)
    assert abs(mat["dominant_periods_h"][0] - M2_H) < 0.25


def test_uneven_sampling_still_finds_the_period():
    t, T, ref, _ = _synthetic(uneven=True, seed=9)
    per = dominant_periods(t, T - ref, 1)
    assert np.all(np.abs(per[:, 0] / 3600 - M2_H) < 0.25)


def test_periods_shorter_than_half_the_record_only():
    # A record of 1.5 days cannot show a 24 h period twice: none beyond span/2 is reported (common practice).
    t = np.arange(0, 1.5 * 86400, 600.0)
    x = np.sin(2 * np.pi * t / 86400) + 0.3 * np.sin(2 * np.pi * t / (6 * 3600))
    per = dominant_periods(t, x[None, :], 3)
    assert np.all(per[np.isfinite(per)] <= 0.75 * 86400 + 1)
    assert per[0, 0] / 3600 == pytest.approx(6.0, abs=0.5)  # the 6 h component is still found


def _write(path, t, T, ref, names):
    lines = ["time [s],ambient [degC]," + ",".join(f"{n} [degC]" for n in names)]
    lines += [f"{t[j]:.1f},{ref[j]:.5f}," + ",".join(f"{T[i, j]:.5f}" for i in range(len(names)))
              for j in range(t.size)]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


def test_cli_json_feeds_diffuse(tmp_path, capsys):
    t, T, ref, means = _synthetic(n_days=10)
    names = [f"S{i}" for i in range(6)]
    p = _write(tmp_path / "grid.csv", t, T, ref, names)
    rc = main(["array-anomaly", p, "--patch", "mat=S0,S1,S2", "--patch", "crack=S3,S4,S5", "--json"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    anomaly = d["patches"]["mat"]["anomaly_for_diffuse"]
    rc = main(["diffuse", "--area", "10 m^2", "--active-fraction", "0.5", "--anomaly", anomaly, "--velocity",
               "0.5 cm/s", "--ambient-temperature", "2.05 degC", "--depth", "1800 m", "--draws", "200",
               # a normal anomaly of 1.8 ± 1.2 K is <= 0 in 6 % of draws, above the default 5 % limit
               "--max-unphysical", "0.1", "--json"])
    assert rc == 0 and json.loads(capsys.readouterr().out)["heat_power_W"] > 0


def test_cli_bad_records(tmp_path, capsys):
    t, T, ref, _ = _synthetic(n_days=2)
    names = ["S0", "S1"]
    p = _write(tmp_path / "g.csv", t, T[:2], ref, names)
    rc = main(["array-anomaly", p, "--reference", "bottom"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "bottom" in err[0]
    lines = (tmp_path / "g.csv").read_text().splitlines()
    lines[10], lines[11] = lines[11], lines[10]
    (tmp_path / "h.csv").write_text("\n".join(lines) + "\n")
    rc = main(["array-anomaly", str(tmp_path / "h.csv")])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "h.csv:12" in err[0]
    rc = main(["array-anomaly", p, "--patch", "mat=S0,S9"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "--patch" in err[0]


def test_cli_missing_file_reference_as_sensor_and_repeated_patch(tmp_path, capsys):
    t, T, ref, _ = _synthetic(n_days=2)
    p = _write(tmp_path / "g.csv", t, T[:2], ref, ["S0", "S1"])
    for argv, word in ((["array-anomaly", str(tmp_path / "none.csv")], "none.csv"),
                       (["array-anomaly", p, "--sensors", "S0,ambient"], "ambient"),
                       (["array-anomaly", p, "--patch", "a=S0", "--patch", "a=S1"], "--patch")):
        rc = main(argv)
        err = capsys.readouterr().err.strip().splitlines()
        assert rc == 2 and len(err) == 1 and word in err[0] and "Traceback" not in err[0]
