"""Plots of section tables and blades, rendered as SVG bytes.

Pure functions: each takes arrays and returns the bytes of one SVG document. Figures are
built on :class:`matplotlib.figure.Figure` with the SVG canvas directly (no pyplot, no global
figure registry), and the style is applied through a private ``rc_context`` held under a
module lock, so concurrent requests never see each other's settings. Output is
deterministic: the metadata date is left out and element ids come from a fixed salt.

The plot style ("tideline") is this project's own: a warm paper ground, slate ink, and a
palette of muted coastal colours (sea slate, kelp, sandstone, heather, lichen, rust).
"""

from __future__ import annotations

import csv
import io
import threading
import warnings
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Literal

import matplotlib as mpl
import numpy as np
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.colors import LinearSegmentedColormap, Normalize
from matplotlib.figure import Figure
from numpy.typing import ArrayLike

PlotKind = Literal["cl", "cd", "cm", "cl-cd"]
PLOT_KINDS: tuple[str, ...] = ("cl", "cd", "cm", "cl-cd")
"""Polar plot kinds: lift, drag and moment against angle of attack, and lift against drag."""

SeriesStyle = Literal["points", "line", "dashed"]
SERIES_STYLES: tuple[str, ...] = ("points", "line", "dashed")
"""``points`` for measured rows (markers), ``line`` for derived tables, ``dashed`` for a
second derived table drawn over the first (e.g. the rotational augmentation)."""

INK = "#26343c"
MUTED_INK = "#5d6b72"
PAPER = "#f8f6f0"
PANEL = "#fdfcf8"
GRID = "#ddd6c6"
PALETTE: tuple[str, ...] = (
    "#2f6f7e",  # sea slate
    "#c48a32",  # sandstone
    "#7d6494",  # heather
    "#5e8a4a",  # kelp
    "#b25a3c",  # rust
    "#4c6c93",  # deep tide
    "#9a8f3e",  # lichen
)
SPAN_COLOURS: tuple[str, ...] = ("#1f4a5a", "#2f7f86", "#8fb39a", "#d9b96a", "#b8653f")
"""Colour ramp along the span (root to tip), also used across thickness."""

AXIS_LABELS: dict[str, str] = {
    "alpha": "angle of attack α [deg]",
    "cl": "lift coefficient c_l [-]",
    "cd": "drag coefficient c_d [-]",
    "cm": "pitching-moment coefficient c_m (c/4, nose-up +) [-]",
    "radius": "radius r [m]",
    "chord": "chord c [m]",
    "twist": "twist θ [deg]",
    "thickness": "relative thickness t/c [-]",
}

_STYLE: dict[str, object] = {
    "svg.fonttype": "none",  # keep text as text: searchable, selectable, testable
    "svg.hashsalt": "polarsvc",  # deterministic element ids
    "font.family": "sans-serif",
    "font.sans-serif": ["Liberation Sans", "DejaVu Sans"],
    "font.size": 10.0,
    "axes.titlesize": 11.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 10.0,
    "axes.labelsize": 10.0,
    "axes.labelcolor": INK,
    "axes.edgecolor": MUTED_INK,
    "axes.linewidth": 0.8,
    "axes.facecolor": PANEL,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "grid.color": GRID,
    "grid.linestyle": (0, (1.5, 2.5)),
    "grid.linewidth": 0.8,
    "xtick.color": MUTED_INK,
    "ytick.color": MUTED_INK,
    "xtick.direction": "in",
    "ytick.direction": "in",
    "legend.frameon": False,
    "legend.fontsize": 9.0,
    "figure.facecolor": PAPER,
    "text.color": INK,
    "lines.linewidth": 1.7,
    "lines.solid_capstyle": "round",
}

_RENDER_LOCK = threading.Lock()


@dataclass(frozen=True)
class PlotSeries:
    """One curve set to draw: a labelled table of coefficients against angle of attack.

    Parameters
    ----------
    label : str
        Legend text (plain text; it is escaped in the SVG).
    alpha_deg : array_like
        Angle of attack [deg].
    cl, cd : array_like
        Lift and drag coefficient [-], same length as ``alpha_deg``.
    cm : array_like or None
        Pitching-moment coefficient about the quarter chord [-]; None when not held.
    style : {"points", "line", "dashed"}
        Measured rows as markers, derived tables as lines.
    """

    label: str
    alpha_deg: ArrayLike
    cl: ArrayLike
    cd: ArrayLike
    cm: ArrayLike | None = None
    style: SeriesStyle = "line"

    def __post_init__(self) -> None:
        if self.style not in SERIES_STYLES:
            raise ValueError(
                f"style={self.style!r} is not known; valid styles: {', '.join(SERIES_STYLES)}"
            )
        size = np.asarray(self.alpha_deg).shape
        for name in ("cl", "cd", "cm"):
            values = getattr(self, name)
            if values is not None and np.asarray(values).shape != size:
                raise ValueError(
                    f"series {self.label!r}: {name} has shape {np.asarray(values).shape}, "
                    f"alpha_deg has {size}"
                )


_CONTROL = dict.fromkeys(c for c in range(32) if c not in (9, 10)) | {127: None}


def _plain(text: str) -> str:
    """Text shown literally: a dollar sign would otherwise start matplotlib math text, and
    control characters (not allowed in XML) are dropped."""
    return text.translate(_CONTROL).replace("$", r"\$")


def _check_kind(kind: str) -> None:
    if kind not in PLOT_KINDS:
        raise ValueError(f"kind={kind!r} is not known; valid kinds: {', '.join(PLOT_KINDS)}")


@contextmanager
def _styled() -> Iterator[None]:
    # Text stays text in the SVG (the browser picks the glyphs), so a glyph missing from the
    # layout font is harmless; the warning filter is changed only while the lock is held.
    with _RENDER_LOCK, mpl.rc_context(_STYLE), warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Glyph .* missing from font")
        yield


def _to_svg(figure: Figure) -> bytes:
    buffer = io.BytesIO()
    FigureCanvasSVG(figure)
    figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()


def _xy(series: PlotSeries, kind: str) -> tuple[np.ndarray, np.ndarray] | None:
    alpha = np.asarray(series.alpha_deg, dtype=np.float64)
    if kind == "cl":
        return alpha, np.asarray(series.cl, dtype=np.float64)
    if kind == "cd":
        return alpha, np.asarray(series.cd, dtype=np.float64)
    if kind == "cm":
        if series.cm is None:
            return None
        return alpha, np.asarray(series.cm, dtype=np.float64)
    return np.asarray(series.cd, dtype=np.float64), np.asarray(series.cl, dtype=np.float64)


def _axis_labels(kind: str) -> tuple[str, str]:
    if kind == "cl-cd":
        return AXIS_LABELS["cd"], AXIS_LABELS["cl"]
    return AXIS_LABELS["alpha"], AXIS_LABELS[kind]


KIND_TITLES = {
    "cl": "Lift against angle of attack",
    "cd": "Drag against angle of attack",
    "cm": "Pitching moment against angle of attack",
    "cl-cd": "Lift against drag",
}


def _draw_series(ax, x: np.ndarray, y: np.ndarray, series: PlotSeries, colour: str):
    """Draw one series; returns its line for the legend (labels are passed to the legend
    explicitly, so a label starting with an underscore is still shown)."""
    if series.style == "points":
        (line,) = ax.plot(
            x, y, linestyle="none", marker="o", markersize=3.6, markerfacecolor=PANEL,
            markeredgecolor=colour, markeredgewidth=1.2, zorder=3,
        )
    elif series.style == "dashed":
        (line,) = ax.plot(x, y, color=colour, linestyle=(0, (5, 2.5)), zorder=2)
    else:
        (line,) = ax.plot(x, y, color=colour, zorder=2)
    return line


def _empty_note(ax, text: str) -> None:
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center", color=MUTED_INK)


def polar_plots_svg(
    series: Sequence[PlotSeries],
    *,
    kind: PlotKind = "cl",
    title: str | None = None,
    colour_index: Sequence[int] | None = None,
) -> bytes:
    """One polar plot of several series as SVG bytes.

    Parameters
    ----------
    series : sequence of PlotSeries
        Curves to overlay, drawn in order (the palette cycles).
    kind : {"cl", "cd", "cm", "cl-cd"}
        Lift, drag or pitching moment against angle of attack, or lift against drag.
        Series without a moment column are left out of a ``cm`` plot.
    title : str, optional
        Plot title; a description of ``kind`` by default.
    colour_index : sequence of int, optional
        Palette entry of each series (e.g. one colour for a before/after pair); by default
        the series' position.

    Raises
    ------
    ValueError
        On an unknown ``kind``.
    """
    _check_kind(kind)
    with _styled():
        figure = Figure(figsize=(6.4, 4.2), layout="constrained")
        ax = figure.add_subplot()
        lines, labels = [], []
        for index, item in enumerate(series):
            xy = _xy(item, kind)
            if xy is None:
                continue
            slot = index if colour_index is None else colour_index[index]
            lines.append(_draw_series(ax, *xy, item, PALETTE[slot % len(PALETTE)]))
            labels.append(_plain(item.label))
        xlabel, ylabel = _axis_labels(kind)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        ax.set_title(_plain(title) if title else KIND_TITLES[kind])
        if kind != "cl-cd":
            ax.axhline(0.0, color=MUTED_INK, linewidth=0.6, zorder=1)
        if lines:
            ax.legend(lines, labels, loc="best")
        else:
            _empty_note(ax, "no data for this plot")
        return _to_svg(figure)


def blade_planform_svg(
    radius_m: ArrayLike,
    chord_m: ArrayLike,
    twist_deg: ArrayLike,
    thickness: ArrayLike,
    *,
    title: str | None = None,
) -> bytes:
    """Chord, twist and relative thickness along the span: three stacked axes sharing the
    radius axis, as SVG bytes.

    Parameters
    ----------
    radius_m : array_like
        Station radius [m].
    chord_m, twist_deg, thickness : array_like
        Chord [m], twist [deg] and relative thickness t/c [-] at each station.
    """
    radius = np.asarray(radius_m, dtype=np.float64)
    rows = [
        (np.asarray(chord_m, dtype=np.float64), "chord", PALETTE[0]),
        (np.asarray(twist_deg, dtype=np.float64), "twist", PALETTE[1]),
        (np.asarray(thickness, dtype=np.float64), "thickness", PALETTE[2]),
    ]
    for values, name, _ in rows:
        if values.shape != radius.shape:
            raise ValueError(f"{name} has shape {values.shape}, radius_m has {radius.shape}")
    with _styled():
        figure = Figure(figsize=(6.4, 6.6), layout="constrained")
        axes = figure.subplots(3, 1, sharex=True)
        for ax, (values, name, colour) in zip(axes, rows, strict=True):
            ax.plot(radius, values, color=colour, marker="o", markersize=3.0)
            ax.set_ylabel(AXIS_LABELS[name])
        axes[-1].set_xlabel(AXIS_LABELS["radius"])
        axes[0].set_title(_plain(title) if title else "Blade along the span")
        return _to_svg(figure)


def overlay_svg(
    series: Sequence[PlotSeries],
    colour_values: Sequence[float],
    *,
    colour_label: str,
    kind: PlotKind = "cl",
    title: str | None = None,
) -> bytes:
    """Many curves of one coefficient coloured by a scalar (radius along a blade, or
    thickness across a family), with a colour bar, as SVG bytes.

    Parameters
    ----------
    series : sequence of PlotSeries
        One curve per station or member.
    colour_values : sequence of float
        The scalar that sets each curve's colour (same length as ``series``).
    colour_label : str
        Colour-bar label with its unit, e.g. ``AXIS_LABELS["radius"]``.
    kind : {"cl", "cd", "cm", "cl-cd"}
        What to draw, as in :func:`polar_plots_svg`.
    """
    _check_kind(kind)
    if len(colour_values) != len(series):
        raise ValueError(
            f"colour_values has {len(colour_values)} entries for {len(series)} series"
        )
    values = np.asarray(colour_values, dtype=np.float64)
    cmap = LinearSegmentedColormap.from_list("polarsvc-span", SPAN_COLOURS)
    low = float(values.min()) if values.size else 0.0
    high = float(values.max()) if values.size else 1.0
    norm = Normalize(vmin=low, vmax=high if high > low else low + 1.0)
    with _styled():
        figure = Figure(figsize=(6.8, 4.4), layout="constrained")
        ax = figure.add_subplot()
        drawn = 0
        for item, value in zip(series, values, strict=True):
            xy = _xy(item, kind)
            if xy is None:
                continue
            ax.plot(*xy, color=cmap(norm(value)), linewidth=1.3)
            drawn += 1
        xlabel, ylabel = _axis_labels(kind)
        ax.set_xlabel(xlabel)
        ax.set_ylabel(ylabel)
        ax.set_title(_plain(title) if title else KIND_TITLES[kind])
        if drawn:
            mappable = mpl.cm.ScalarMappable(norm=norm, cmap=cmap)
            bar = figure.colorbar(mappable, ax=ax, pad=0.02, aspect=30)
            bar.set_label(colour_label)
            bar.outline.set_visible(False)
        else:
            _empty_note(ax, "no data for this plot")
        return _to_svg(figure)


# -- the tables behind the plots, as CSV ---------------------------------------------------
def _number(value: float) -> str:
    return repr(float(value))


def _cell(text: str) -> str:
    """A text cell that a spreadsheet will not read as a formula."""
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text


def series_csv(series: Sequence[PlotSeries]) -> bytes:
    """The data behind a polar or overlay plot as CSV in long layout:
    ``series,alpha_deg,cl,cd,cm`` (``cm`` empty where not held)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["series", "alpha_deg", "cl", "cd", "cm"])
    for item in series:
        alpha = np.asarray(item.alpha_deg, dtype=np.float64)
        cl = np.asarray(item.cl, dtype=np.float64)
        cd = np.asarray(item.cd, dtype=np.float64)
        cm = None if item.cm is None else np.asarray(item.cm, dtype=np.float64)
        for index in range(alpha.size):
            writer.writerow([
                _cell(item.label),
                _number(alpha[index]),
                _number(cl[index]),
                _number(cd[index]),
                "" if cm is None else _number(cm[index]),
            ])
    return buffer.getvalue().encode("utf-8")


def planform_csv(
    radius_m: ArrayLike, chord_m: ArrayLike, twist_deg: ArrayLike, thickness: ArrayLike
) -> bytes:
    """The data behind :func:`blade_planform_svg` as CSV:
    ``radius_m,chord_m,twist_deg,thickness``."""
    columns = [np.asarray(c, dtype=np.float64) for c in (radius_m, chord_m, twist_deg, thickness)]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(["radius_m", "chord_m", "twist_deg", "thickness"])
    for row in zip(*columns, strict=True):
        writer.writerow([_number(v) for v in row])
    return buffer.getvalue().encode("utf-8")
