"""Quantity parsing and uncertainty specifications."""

import numpy as np
import pytest

from ventflux.errors import InputError
from ventflux.uncertainty import Uncertain, draw_inputs, parse_uncertain, summarize
from ventflux.units import Q_, parse_quantity


@pytest.mark.parametrize("text, dim, si, unit", [
    ("352 degC", "temperature", 625.15, "K"),
    ("352degC", "temperature", 625.15, "K"),
    ("625.15 K", "temperature", 625.15, "K"),
    ("12 cm", "length", 0.12, "m"),
    ("26 MPa", "pressure", 26e6, "Pa"),
    ("25MPa", "pressure", 25e6, "Pa"),
    ("2600 dbar", "pressure", 26e6, "Pa"),
    ("1.0e-3/s", "frequency", 1e-3, "1/s"),
    ("1.0e-3 /s", "frequency", 1e-3, "1/s"),
    ("1.4 m/s", "velocity", 1.4, "m/s"),
    ("34.6", "dimensionless", 34.6, "dimensionless"),
])
def test_parse_quantity(text, dim, si, unit):
    assert parse_quantity(text, dim, "x").to(unit).magnitude == pytest.approx(si)


@pytest.mark.parametrize("text, dim", [("3 s", "length"), ("abc", "length"), ("12", "length"), ("", "velocity"),
                                       ("12 m/s^2", "velocity"), ("1 m", "temperature")])
def test_parse_quantity_errors_name_field_and_allowed(text, dim):
    with pytest.raises(InputError) as err:
        parse_quantity(text, dim, "--diameter")
    assert err.value.field == "--diameter"
    assert "expected" in err.value.line() and "\n" not in err.value.line()


def test_offset_units_difference_is_kelvin():
    assert (Q_(352, "degC") - Q_(2, "degC")).to("K").magnitude == pytest.approx(350)


@pytest.mark.parametrize("text, kind, a, b", [
    ("1.4 ± 0.2 m/s", "normal", 1.4, 0.2),
    ("1.4 +- 0.2 m/s", "normal", 1.4, 0.2),
    ("1.4+/-0.2m/s", "normal", 1.4, 0.2),
    ("uniform(1.2, 1.6) m/s", "uniform", 1.2, 1.6),
    ("lognormal(1.4, 1.3) m/s", "lognormal", 1.4, 1.3),
])
def test_parse_uncertain(text, kind, a, b):
    u = parse_uncertain(text, "velocity", "v")
    assert isinstance(u, Uncertain) and (u.kind, u.a, u.b) == (kind, a, b)


@pytest.mark.parametrize("text", ["uniform(2, 1) m/s", "lognormal(1, 0.5) m/s", "lognormal(300, 1.1) degC",
                                  "1.4 ± 0.2 s"])
def test_parse_uncertain_errors(text):
    with pytest.raises(InputError):
        parse_uncertain(text, "velocity" if "degC" not in text else "temperature", "v")


def test_temperature_spread_is_a_difference():
    d = draw_inputs({"t": parse_uncertain("352 ± 3 degC", "temperature", "t")}, 100_000, seed=1)["t"]
    k = d.to("K").magnitude
    assert k.mean() == pytest.approx(625.15, abs=0.05)
    assert k.std() == pytest.approx(3.0, rel=0.02)


def test_lognormal_median_and_factor():
    d = draw_inputs({"v": parse_uncertain("lognormal(2, 1.5) m/s", "velocity", "v")}, 200_000, seed=2)["v"]
    m = d.magnitude
    assert np.median(m) == pytest.approx(2.0, rel=0.01)
    assert np.std(np.log(m)) == pytest.approx(np.log(1.5), rel=0.01)


def test_summary_percentiles():
    s = summarize(Q_(np.arange(1, 1002, dtype=float), "W"))
    assert s.median.magnitude == pytest.approx(501)
    assert s.p05.magnitude == pytest.approx(51)
    assert s.p95.magnitude == pytest.approx(951)


def test_summary_of_one_finite_draw_has_no_spread_and_no_warning():
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # numpy's "Degrees of freedom <= 0" must not reach a user's terminal
        s = summarize(Q_(np.array([np.nan, 3.0]), "W"))
    assert s.draws == 1 and s.median.magnitude == 3.0
    assert np.isnan(s.std.magnitude)  # undefined, not zero: one draw says nothing of the spread


@pytest.mark.parametrize("text", ["4 ± 3 mm", "4 +/- 3 mm", "uniform(3, 5) mm", "normal(4, 1) mm"])
def test_a_distribution_where_one_value_is_needed_is_named_as_such(text):
    # An input that cannot be uncertain (a video's pixel size: its error is the scale factor's) given as a
    # distribution: the refusal says so instead of asking for a unit the value already has.
    with pytest.raises(InputError, match="one exact value") as e:
        parse_quantity(text, "length", "pixel_size")
    assert e.value.field == "pixel_size" and e.value.value == text
