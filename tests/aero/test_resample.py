"""Resampling (linear interpolation, checked against numpy.interp as the reference)."""

from __future__ import annotations

import numpy as np
import pytest

from polarsvc.aero import InsufficientDataError, ParameterError, resample, uniform_grid

from .synthetic import kirchhoff_polar


def test_uniform_grid_half_degree_has_721_points() -> None:
    grid = uniform_grid(0.5)
    assert grid.size == 721  # 360 / 0.5 + 1 (arithmetic)
    assert grid[0] == -180.0 and grid[-1] == 180.0 and grid[360] == 0.0


def test_uniform_grid_refuses_non_dividing_step() -> None:
    with pytest.raises(ParameterError) as info:
        uniform_grid(0.7)
    assert info.value.parameter == "step_deg"
    with pytest.raises(ParameterError):
        uniform_grid(0.0)


def test_resample_step_aligned_on_multiples() -> None:
    p = kirchhoff_polar(low=-20.3, high=25.2, step=0.9)
    q = resample(p, step_deg=0.5)
    # multiples of 0.5 within the data range (arithmetic)
    assert q.alpha_deg[0] == np.ceil(p.alpha_deg[0] / 0.5) * 0.5
    assert q.alpha_deg[-1] == np.floor(p.alpha_deg[-1] / 0.5) * 0.5
    np.testing.assert_allclose(np.diff(q.alpha_deg), 0.5)
    # reference: numpy.interp
    np.testing.assert_array_equal(q.cl, np.interp(q.alpha_deg, p.alpha_deg, p.cl))
    np.testing.assert_array_equal(q.cm, np.interp(q.alpha_deg, p.alpha_deg, p.cm))
    assert q.history[-1]["step"] == "resample"


def test_resample_endpoints_kept_when_on_grid() -> None:
    p = kirchhoff_polar(low=-20.0, high=25.0, step=1.0)
    q = resample(p, step_deg=0.5)
    assert q.alpha_deg[0] == -20.0 and q.alpha_deg[-1] == 25.0 and q.size == 91


def test_resample_explicit_angles() -> None:
    p = kirchhoff_polar()
    q = resample(p, alpha_deg=[0.25, -3.5, 10.0])
    np.testing.assert_array_equal(q.alpha_deg, [-3.5, 0.25, 10.0])
    with pytest.raises(ParameterError) as info:
        resample(p, alpha_deg=[0.0, 30.0])
    assert info.value.parameter == "alpha_deg"


def test_resample_needs_exactly_one_option_and_enough_points() -> None:
    p = kirchhoff_polar()
    with pytest.raises(ParameterError):
        resample(p)
    with pytest.raises(ParameterError):
        resample(p, step_deg=1.0, alpha_deg=[0.0, 1.0])
    narrow = kirchhoff_polar(low=0.1, high=0.9, step=0.1)
    with pytest.raises(InsufficientDataError):
        resample(narrow, step_deg=1.0)
