"""Momentum-theory relations of the blade-element momentum method.

References
----------
.. [1] Glauert, H. (1935). "Airplane propellers", in Durand, W. F. (ed.), Aerodynamic
   Theory, vol. IV, Division L. Springer, Berlin (momentum theory, tip loss after Prandtl).
.. [2] Buhl, M. L. (2005). "A new empirical relationship between thrust coefficient and
   induction factor for the turbulent windmill state". NREL/TP-500-36834.
.. [3] Ning, S. A. (2014). "A simple solution method for the blade element momentum
   equations with guaranteed convergence". Wind Energy 17, 1327-1345.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]

BUHL_SWITCH_INDUCTION = 0.4
"""Axial induction where Buhl's relation takes over from momentum theory [2]."""

BUHL_SWITCH_K = BUHL_SWITCH_INDUCTION / (1.0 - BUHL_SWITCH_INDUCTION)
"""The matching value 2/3 of Ning's k (a = k / (1 + k) = 0.4) [3]."""


def prandtl_factor(exponent: ArrayLike) -> FloatArray:
    """Prandtl's loss factor ``F = (2/pi) arccos(exp(-f))`` [1]; ``f = 0`` gives 0.

    Parameters
    ----------
    exponent : array_like
        ``f = B/2 (R - r) / (r |sin phi|)`` (tip) or ``B/2 (r - R_hub) / (R_hub |sin phi|)``
        (hub) [-].
    """
    f = np.asarray(exponent, dtype=np.float64)
    return (2.0 / math.pi) * np.arccos(np.exp(-f))


def buhl_thrust_coefficient(axial_induction: ArrayLike, loss_factor: ArrayLike) -> FloatArray:
    """Local thrust coefficient of Buhl's relation [2] (eq. 13)::

        CT = 8/9 + (4 F - 40/9) a + (50/9 - 4 F) a^2

    which meets momentum theory ``CT = 4 a F (1 - a)`` with equal value and slope at
    ``a = 0.4`` and gives ``CT = 2`` at ``a = 1``.
    """
    a = np.asarray(axial_induction, dtype=np.float64)
    F = np.asarray(loss_factor, dtype=np.float64)
    return 8.0 / 9.0 + (4.0 * F - 40.0 / 9.0) * a + (50.0 / 9.0 - 4.0 * F) * a**2


def buhl_axial_induction(k: ArrayLike, loss_factor: ArrayLike) -> FloatArray:
    """Axial induction in the high-thrust region (``k > 2/3``) from Buhl's relation [2] in
    Ning's variables [3] (eq. 16)::

        g1 = 2 F k - (10/9 - F),  g2 = 2 F k - F (4/3 - F),  g3 = 2 F k - (25/9 - 2 F)
        a = (g1 - sqrt(g2)) / g3

    with ``k = sigma' cn / (4 F sin^2 phi)``, solving ``4 F k (1 - a)^2 = CT_Buhl(a)``.

    Notes
    -----
    Ning switches to ``a = 1 - 1 / (2 sqrt(g2))`` where ``|g3| < 1e-6``; here the same root
    is written as ``a = (2 F k - 4/9) / (g1 + sqrt(g2))`` wherever that denominator is the
    larger (``g1^2 - g2 = g3 (2 F k - 4/9)``), so neither form loses digits and ``a`` is
    smooth in k.
    """
    k = np.asarray(k, dtype=np.float64)
    F = np.asarray(loss_factor, dtype=np.float64)
    u = 2.0 * F * k
    g1 = u - (10.0 / 9.0 - F)
    g2 = np.maximum(u - F * (4.0 / 3.0 - F), 0.0)
    g3 = u - (25.0 / 9.0 - 2.0 * F)
    root = np.sqrt(g2)
    other = g1 + root
    with np.errstate(divide="ignore", invalid="ignore"):
        direct = (g1 - root) / g3
        rational = (u - 4.0 / 9.0) / other
    return np.where(np.abs(g3) >= np.abs(other), direct, rational)


def momentum_axial_induction(
    k: ArrayLike, loss_factor: ArrayLike, *, high_thrust: bool = True
) -> FloatArray:
    """Axial induction of the windmill state (``phi > 0``) [3]: ``a = k / (1 + k)``
    (momentum theory) for ``k <= 2/3``, Buhl's relation above when ``high_thrust``."""
    k = np.asarray(k, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        plain = k / (1.0 + k)
    if not high_thrust:
        return plain
    high = k > BUHL_SWITCH_K
    if not np.any(high):
        return plain
    F = np.broadcast_to(np.asarray(loss_factor, dtype=np.float64), k.shape)
    a = np.array(plain, dtype=np.float64)
    a[high] = buhl_axial_induction(k[high], F[high])
    return a
