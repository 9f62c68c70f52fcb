"""A plausible section table as CSV rows, for tests whose subject is not the numbers (names,
access, concurrency): it passes the upload quality checks. Invented test data from the
Kirchhoff model of tests/aero/synthetic.py (thin-airfoil slope 2 pi per rad)."""

from __future__ import annotations

from tests.aero.synthetic import kirchhoff_polar


def plausible_rows(lift_offset: float = 0.0) -> str:
    """``alpha_deg,cl,cd`` header and rows -10..16 deg every 2 deg; ``lift_offset`` moves cl
    (keep it within +-0.05 so the table stays plausible) to make distinct contents."""
    polar = kirchhoff_polar(low=-10.0, high=16.0, step=2.0, with_cm=False)
    rows = "".join(
        f"{float(a)!r},{float(cl + lift_offset)!r},{float(cd)!r}\n"
        for a, cl, cd in zip(polar.alpha_deg, polar.cl, polar.cd, strict=True)
    )
    return "alpha_deg,cl,cd\n" + rows
