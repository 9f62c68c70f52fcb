"""Annual energy of a power curve for a wind-speed distribution.

References
----------
.. [1] IEC 61400-1:2005+A1:2010, "Wind turbines - Part 1: Design requirements", Table 1
   (annual mean wind speed V_ave = 0.2 V_ref: 10, 8.5 and 7.5 m/s for classes I, II, III;
   from memory) and sec. 6.3.1 (Rayleigh distribution of the hub-height speed).
.. [2] Manwell, J. F., McGowan, J. G., Rogers, A. L. (2009). Wind Energy Explained, 2nd ed.,
   Wiley, sec. 2.4 (Rayleigh and Weibull distributions; energy production from a power
   curve).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Protocol

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.aero.errors import ParameterError, show_value

FloatArray = NDArray[np.float64]

HOURS_PER_YEAR = 8766.0
"""365.25 days of 24 h."""

IEC_CLASS_MEAN_WIND_M_S = {"I": 10.0, "II": 8.5, "III": 7.5}
"""Annual mean wind speed at hub height of the IEC 61400-1 classes [1] (from memory)."""

_GAUSS_X, _GAUSS_W = np.polynomial.legendre.leggauss(8)


class WindDistribution(Protocol):
    """A distribution of the wind speed: its cumulative distribution function ``cdf(u)``
    (right-continuous), ``cdf_integral(a, b) = int_a^b cdf(u) du`` per interval and the
    probability ``point_mass(u)`` of exactly the speed u."""

    label: str

    def cdf(self, speed_m_s: FloatArray) -> FloatArray: ...

    def point_mass(self, speed_m_s: float) -> float: ...

    def cdf_integral(self, a: FloatArray, b: FloatArray) -> FloatArray: ...


def _positive(name: str, value: float) -> float:
    number = float(value)
    if not (math.isfinite(number) and number > 0.0):
        raise ParameterError(name, f"must be positive, got {show_value(value)}")
    return number


@dataclass(frozen=True)
class Weibull:
    """Weibull distribution [2]: ``F(u) = 1 - exp(-(u / A)^k)``, shape k [-], scale A [m/s]."""

    shape_k: float
    scale_m_s: float
    label: str = ""

    def __post_init__(self) -> None:
        _positive("shape_k", self.shape_k)
        _positive("scale_m_s", self.scale_m_s)
        if not self.label:
            object.__setattr__(
                self, "label", f"Weibull k={self.shape_k:g}, A={self.scale_m_s:g} m/s"
            )

    @property
    def mean_m_s(self) -> float:
        """Mean speed A Gamma(1 + 1/k) [m/s]."""
        return self.scale_m_s * math.gamma(1.0 + 1.0 / self.shape_k)

    def cdf(self, speed_m_s: FloatArray) -> FloatArray:
        u = np.maximum(np.asarray(speed_m_s, dtype=np.float64), 0.0)
        return -np.expm1(-((u / self.scale_m_s) ** self.shape_k))

    def point_mass(self, speed_m_s: float) -> float:
        return 0.0

    def cdf_integral(self, a: FloatArray, b: FloatArray) -> FloatArray:
        """8-point Gauss-Legendre quadrature per interval (the CDF is smooth)."""
        a = np.asarray(a, dtype=np.float64)
        b = np.asarray(b, dtype=np.float64)
        half = 0.5 * (b - a)
        mid = 0.5 * (b + a)
        nodes = mid[..., None] + half[..., None] * _GAUSS_X
        return half * np.sum(self.cdf(nodes) * _GAUSS_W, axis=-1)


def rayleigh(mean_m_s: float, label: str = "") -> Weibull:
    """Rayleigh distribution of annual mean ``mean_m_s`` [m/s] [1, 2]:
    ``F(u) = 1 - exp(-pi/4 (u / V_ave)^2)``, a Weibull with k = 2, A = 2 V_ave / sqrt(pi)."""
    mean = _positive("mean_m_s", mean_m_s)
    return Weibull(2.0, 2.0 * mean / math.sqrt(math.pi),
                   label or f"Rayleigh, mean {mean:g} m/s")


@dataclass(frozen=True)
class ConstantWind:
    """A wind that blows at one speed all year (a step CDF at ``speed_m_s``)."""

    speed_m_s: float
    label: str = ""

    def __post_init__(self) -> None:
        _positive("speed_m_s", self.speed_m_s)
        if not self.label:
            object.__setattr__(self, "label", f"constant {self.speed_m_s:g} m/s")

    def cdf(self, speed_m_s: FloatArray) -> FloatArray:
        return (np.asarray(speed_m_s, dtype=np.float64) >= self.speed_m_s).astype(np.float64)

    def point_mass(self, speed_m_s: float) -> float:
        return 1.0 if float(speed_m_s) == self.speed_m_s else 0.0

    def cdf_integral(self, a: FloatArray, b: FloatArray) -> FloatArray:
        a = np.asarray(a, dtype=np.float64)
        b = np.asarray(b, dtype=np.float64)
        return np.maximum(b - np.maximum(a, self.speed_m_s), 0.0)


@dataclass(frozen=True)
class AnnualEnergy:
    """Annual energy [Wh], mean power [W] and capacity factor [-] (energy over rated power
    times the hours of a year) for one distribution."""

    distribution: str
    energy_wh: float
    mean_power_w: float
    capacity_factor: float | None


def mean_power(
    wind_speed_m_s: ArrayLike, power_w: ArrayLike, distribution: WindDistribution
) -> float:
    """Expected power ``E[P] = int P dF`` [W] of a power curve given at ascending speeds and
    linear between them, zero below the first and above the last speed (cut-in, cut-out).

    Each interval is integrated exactly for the linear power (by parts)::

        int_a^b P dF = P(a) (F(b) - F(a)) + s ((b - a) F(b) - int_a^b F du)

    with s the slope of P on the interval, so a step CDF (a constant wind u0) gives P(u0);
    a point mass at the first speed (cut-in) adds its power times that probability.
    """
    u = np.asarray(wind_speed_m_s, dtype=np.float64)
    p = np.asarray(power_w, dtype=np.float64)
    if u.ndim != 1 or u.size < 2 or u.shape != p.shape:
        raise ParameterError("power_w", "needs one value per wind speed (at least two)")
    if np.any(np.diff(u) <= 0.0):
        raise ParameterError("wind_speed_m_s", "must be strictly ascending")
    a, b = u[:-1], u[1:]
    slope = np.diff(p) / np.diff(u)
    F_a = distribution.cdf(a)
    F_b = distribution.cdf(b)
    terms = p[:-1] * (F_b - F_a) + slope * ((b - a) * F_b - distribution.cdf_integral(a, b))
    return float(np.sum(terms)) + float(p[0]) * distribution.point_mass(float(u[0]))


def annual_energy(
    wind_speed_m_s: ArrayLike,
    power_w: ArrayLike,
    distribution: WindDistribution,
    *,
    rated_power_w: float | None = None,
    hours: float = HOURS_PER_YEAR,
) -> AnnualEnergy:
    """Annual energy of a power curve: ``hours x E[P]`` (:func:`mean_power`), 8766 h by
    default, and the capacity factor ``E[P] / rated_power_w`` when the rated power is
    given [2]."""
    mean = mean_power(wind_speed_m_s, power_w, distribution)
    capacity = None if rated_power_w is None else mean / _positive("rated_power_w",
                                                                    rated_power_w)
    return AnnualEnergy(distribution.label, mean * hours, mean, capacity)


def iec_class_distributions() -> list[Weibull]:
    """Rayleigh distributions at the annual mean speeds of IEC 61400-1 classes I-III."""
    return [
        rayleigh(mean, f"IEC class {name}: Rayleigh, mean {mean:g} m/s")
        for name, mean in IEC_CLASS_MEAN_WIND_M_S.items()
    ]
