"""Characteristic values and the Kirchhoff separation function."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from polarsvc.aero import (
    InsufficientDataError,
    Polar,
    attached_lift_line,
    characteristics,
    dynamic_stall_inputs,
    extend_full_range,
    measured_range,
    separation_function,
)
from polarsvc.formats import parse_polar_file

from .synthetic import TWO_PI, cylinder, kirchhoff_polar, separation

SEED = Path(__file__).resolve().parents[2] / "seed_polars"


def test_thin_airfoil_lift_slope() -> None:
    # thin-airfoil theory: cl = 2 pi sin(alpha - alpha0), slope 2 pi per rad
    # (Abbott & von Doenhoff 1959, "Theory of Wing Sections", ch. 4; from memory)
    alpha = np.arange(-10.0, 12.5, 0.5)
    cl = TWO_PI * np.sin(np.radians(alpha + 1.5))
    p = Polar(alpha, cl, 0.01 + 0 * alpha)
    slope, alpha0 = attached_lift_line(p)
    assert slope == pytest.approx(TWO_PI, rel=2e-3)  # sin vs its chord over +-5 deg: 0.1 %
    assert alpha0 == pytest.approx(-1.5, abs=1e-9)


def test_lift_line_robust_to_noise() -> None:
    rng = np.random.default_rng(7)
    p0 = kirchhoff_polar(alpha0_deg=-2.0, slope_per_rad=6.0, alpha_sep_deg=12.0)
    noisy = Polar(p0.alpha_deg, p0.cl + rng.normal(0.0, 0.01, p0.size), p0.cd)
    slope, alpha0 = attached_lift_line(noisy)
    assert slope == pytest.approx(6.0, rel=0.05)
    assert alpha0 == pytest.approx(-2.0, abs=0.2)


def test_lift_line_needs_points() -> None:
    sparse = Polar([-20.0, 0.5, 20.0], [-1.0, 0.1, 1.0], [0.01, 0.01, 0.01])
    with pytest.raises(InsufficientDataError):
        attached_lift_line(sparse)


def test_characteristics_of_synthetic_polar() -> None:
    # literal values from an independent numpy script run once on the synthetic formula
    # (tests/aero/synthetic.py, alpha0 -2 deg, slope 2 pi, separation at 13 deg, 1 deg steps):
    # least-squares slope over |alpha + 2| <= 5 deg: 6.242872522 /rad, alpha0 -2 deg;
    # cl max 1.052883202 at 10 deg (window -10..35), cl min -1.052883202 at -14 deg (window
    # -35..10), cd min 0.008003966 at 0 deg, (L/D)max 67.729237383 at 5 deg; cm at alpha0:
    # -0.03 - 0.08 (1 - f(alpha0)) sign(0) = -0.03
    p = kirchhoff_polar(alpha0_deg=-2.0, alpha_sep_deg=13.0)
    c = characteristics(p)
    assert c.alpha0_deg == pytest.approx(-2.0, abs=1e-9)
    assert c.cl_alpha_per_rad == pytest.approx(6.242872522, abs=1e-8)
    assert c.cl_alpha_per_deg == pytest.approx(6.242872522 * math.pi / 180.0, abs=1e-9)
    assert (c.cl_max, c.alpha_cl_max_deg) == (pytest.approx(1.052883202, abs=1e-9), 10.0)
    assert (c.cl_min, c.alpha_cl_min_deg) == (pytest.approx(-1.052883202, abs=1e-9), -14.0)
    assert (c.cd_min, c.alpha_cd_min_deg) == (pytest.approx(0.008003966, abs=1e-9), 0.0)
    assert (c.ld_max, c.alpha_ld_max_deg) == (pytest.approx(67.729237383, abs=1e-8), 5.0)
    assert c.cm0 == pytest.approx(-0.03, abs=1e-12)
    assert characteristics(kirchhoff_polar(with_cm=False)).cm0 is None


def test_characteristics_of_full_range_table_use_measured_rows() -> None:
    # the extension's lift hump near 45 deg (about 1.3 with cd_max 2.01) is no cl_max: the
    # values are those of the measured rows (1.052883202 at 10 deg, as above)
    e = extend_full_range(kirchhoff_polar())
    assert measured_range(e) == (-20.0, 25.0)
    c = characteristics(e)
    assert (c.cl_max, c.alpha_cl_max_deg) == (pytest.approx(1.052883202, abs=1e-9), 10.0)
    assert (c.cl_min, c.alpha_cl_min_deg) == (pytest.approx(-1.052883202, abs=1e-9), -14.0)


def test_characteristics_of_an_extended_seed_polar() -> None:
    # seed_polars/skua/SKUA-400_re2e6_rough.csv: the largest cl of its rows is 0.777 at 7 deg
    # (read from the file); extended to -180..180 the table reaches 0.895 near 35 deg, which
    # must not become cl_max
    path = SEED / "skua" / "SKUA-400_re2e6_rough.csv"
    polar = parse_polar_file(path.read_bytes(), filename=path.name)[0].polar
    e = extend_full_range(polar)
    assert float(np.max(e.cl[(e.alpha_deg > 30) & (e.alpha_deg < 40)])) > 0.85
    c = characteristics(e)
    assert c.cl_max == pytest.approx(0.777, abs=5e-4)
    assert c.alpha_cl_max_deg == 7.0


def test_cylinder_has_no_lift_line() -> None:
    assert attached_lift_line(cylinder()) == (0.0, 0.0)


def test_kirchhoff_round_trip() -> None:
    # a polar built from a known f gives that f back (Leishman & Beddoes 1989; Hansen,
    # Gaunaa & Madsen 2004, Risoe-R-1354; from memory)
    alpha = np.arange(-20.0, 30.5, 0.5)
    alpha0 = -2.0
    f_known = separation(alpha, alpha0, 12.0)
    cl_lin = TWO_PI * np.radians(alpha - alpha0)
    cl = cl_lin * ((1 + np.sqrt(f_known)) / 2) ** 2
    p = Polar(alpha, cl, 0.01 + 0 * alpha)
    f, cl_fs = separation_function(p, cl_alpha_per_rad=TWO_PI, alpha0_deg=alpha0)
    away = alpha != alpha0
    np.testing.assert_allclose(f[away], f_known[away], atol=1e-10)
    # fully separated lift: cl = cl_lin f + cl_fs (1 - f) recombines to cl
    np.testing.assert_allclose(cl_lin * f + cl_fs * (1 - f), cl, atol=1e-10)
    # with the fitted line the round trip still holds closely
    f_fit, _ = separation_function(p)
    np.testing.assert_allclose(f_fit, f_known, atol=0.02)
    assert np.all((f_fit >= 0) & (f_fit <= 1))


def test_dynamic_stall_inputs_of_a_known_separation() -> None:
    # cl built from the logistic f of tests/aero/synthetic.py (alpha0 -2, 2 pi, separation
    # at 13 deg): f = 0.7 where |alpha + 2| = 13 + 2 ln(3/7) = 11.305 deg (solved by hand),
    # so on the 1 deg grid the first angle with f <= 0.7 is 10 deg above alpha0 and -14 deg
    # below it (stall onset: Leishman & Beddoes 1989, alpha_1 at f = 0.7; from memory)
    alpha = np.arange(-30.0, 31.0, 1.0)
    f_known = separation(alpha, -2.0, 13.0)
    cl_lin = TWO_PI * np.radians(alpha + 2.0)
    cl = cl_lin * ((1 + np.sqrt(f_known)) / 2) ** 2
    found = dynamic_stall_inputs(alpha, cl)
    assert found.alpha0_deg[0] == pytest.approx(-2.0, abs=1e-9)
    assert found.stall_onset_deg[0] == 10.0 and found.stall_onset_neg_deg[0] == -14.0
    # where the logistic f is still above 0.99 (|alpha + 2| <= 13 - 2 ln 99 = 3.8 deg) the
    # fitted line reaches the lift: f is held at exactly 1 there
    near = np.abs(alpha + 2.0) <= 3.0
    assert np.all(found.f_separation[0][near] == 1.0)
    # past the onset f follows the known function closely (fitted slope 0.6 % below 2 pi)
    past = np.abs(alpha + 2.0) >= 12.0
    np.testing.assert_allclose(found.f_separation[0][past], f_known[past], atol=0.03)


def test_dynamic_stall_inputs_hold_f_against_noise() -> None:
    # noise of +-0.01 on the lift of the attached range: the raw inversion dips below 1,
    # the served f stays at 1 up to where the lift last reaches the line
    rng = np.random.default_rng(3)
    alpha = np.arange(-20.0, 25.5, 0.5)
    cl = TWO_PI * np.radians(alpha + 2.0) * ((1 + np.sqrt(separation(alpha, -2.0, 13.0))) / 2) ** 2
    noisy = cl + np.where(np.abs(alpha + 2.0) < 6.0, rng.normal(0.0, 0.01, alpha.size), 0.0)
    raw = dynamic_stall_inputs(alpha, noisy, hold_attached=False)
    held = dynamic_stall_inputs(alpha, noisy)
    inside = np.abs(alpha + 2.0) <= 2.0
    assert np.min(raw.f_separation[0][inside]) < 0.999
    assert np.all(held.f_separation[0][inside] == 1.0)
    # cl_fs where f = 1 is cl_lin / 2 (Hansen, Gaunaa & Madsen 2004, Risoe-R-1354; from memory)
    slope = np.radians(held.cl_alpha_per_rad[0])
    line = slope * (alpha - held.alpha0_deg[0])
    np.testing.assert_allclose(held.cl_fs[0][inside], line[inside] / 2.0, rtol=1e-12)


def test_dynamic_stall_inputs_of_a_cylinder() -> None:
    c = cylinder()
    found = dynamic_stall_inputs(c.alpha_deg, c.cl)
    assert np.all(found.f_separation == 0.0) and np.all(found.cl_fs == 0.0)
    assert np.isnan(found.stall_onset_deg[0])
