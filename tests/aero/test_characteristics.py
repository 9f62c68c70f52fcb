"""Characteristic values and the Kirchhoff separation function."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import (
    InsufficientDataError,
    Polar,
    attached_lift_line,
    characteristics,
    extend_full_range,
    separation_function,
)

from .synthetic import TWO_PI, cylinder, kirchhoff_polar, separation


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
    p = kirchhoff_polar(alpha0_deg=-2.0, alpha_sep_deg=13.0)
    c = characteristics(p)
    assert c.alpha0_deg == pytest.approx(-2.0, abs=0.05)
    assert c.cl_alpha_per_deg == pytest.approx(math.radians(c.cl_alpha_per_rad))
    window = (p.alpha_deg >= -10) & (p.alpha_deg <= 25)
    assert c.cl_max == pytest.approx(p.cl[window].max())
    assert c.alpha_cl_max_deg == p.alpha_deg[window][np.argmax(p.cl[window])]
    assert c.cd_min == pytest.approx(p.cd.min())
    ratio = p.cl / p.cd
    assert c.ld_max == pytest.approx(ratio.max()) and c.alpha_ld_max_deg > 0
    assert c.cm0 == pytest.approx(np.interp(c.alpha0_deg, p.alpha_deg, p.cm))
    assert characteristics(kirchhoff_polar(with_cm=False)).cm0 is None


def test_characteristics_of_full_range_table() -> None:
    p = kirchhoff_polar()
    e = extend_full_range(p)
    assert characteristics(e).cl_max == characteristics(p).cl_max


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
