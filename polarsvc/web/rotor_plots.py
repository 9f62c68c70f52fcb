"""Rotor performance plots (matplotlib SVG, like the other pages) and the CSV behind them."""

from __future__ import annotations

import io
from collections.abc import Sequence

import numpy as np
from matplotlib.figure import Figure
from numpy.typing import ArrayLike

from polarsvc.web.plots import PALETTE, _empty_note, _plain, _styled, _to_svg


def curves_svg(
    x: ArrayLike,
    curves: Sequence[tuple[str, ArrayLike]],
    *,
    xlabel: str,
    ylabel: str,
    title: str,
    zero_line: bool = False,
) -> bytes:
    """Curves over one x axis (one colour each, with a legend when more than one), SVG."""
    xs = np.asarray(x, dtype=np.float64)
    with _styled():
        figure = Figure(figsize=(6.4, 4.2), layout="constrained")
        ax = figure.add_subplot()
        drawn = 0
        for index, (label, values) in enumerate(curves):
            ys = np.asarray(values, dtype=np.float64)
            if ys.shape != xs.shape:
                raise ValueError(f"curve {label!r} has shape {ys.shape}, x has {xs.shape}")
            ax.plot(xs, ys, color=PALETTE[index % len(PALETTE)], linewidth=1.6,
                    marker="o" if xs.size <= 30 else None, markersize=3.0,
                    label=_plain(label))
            drawn += 1
        if zero_line:
            ax.axhline(0.0, color="#888888", linewidth=0.8)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        ax.set_title(_plain(title))
        if drawn > 1:
            ax.legend(frameon=False)
        if not drawn or xs.size == 0:
            _empty_note(ax, "no data for this plot")
        return _to_svg(figure)


def curves_csv(x_name: str, x: ArrayLike, curves: Sequence[tuple[str, ArrayLike]]) -> bytes:
    """The same curves as CSV: the x column, then one column per curve."""
    xs = np.asarray(x, dtype=np.float64)
    buffer = io.StringIO()
    buffer.write(",".join([x_name, *(name for name, _ in curves)]) + "\n")
    columns = [np.asarray(values, dtype=np.float64) for _, values in curves]
    for i, value in enumerate(xs.tolist()):
        buffer.write(",".join(repr(v) for v in [value, *(c[i].item() for c in columns)]) + "\n")
    return buffer.getvalue().encode("utf-8")
