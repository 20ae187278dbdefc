"""Figures of a design study, drawn with matplotlib's Agg backend (no display needed).

Every function takes plain SI arrays and returns a :class:`matplotlib.figure.Figure`
sized for a slide (10 in × 5.6 in); :func:`render` turns it into PNG or SVG bytes.
Axes state their units; series differ by line style and marker as well as colour, so a
figure stays readable when printed in grey.
"""
from __future__ import annotations

import io
from dataclasses import replace
from typing import Iterable, Sequence

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from .numbers import ZERO_CELSIUS, celsius
from .uncertainty_figures import draw_band, draw_temperature_interval

#: Slide size [in].
FIGSIZE = (10.0, 5.6)
#: Resolution of the PNG files [dots per inch].
PNG_DPI = 150

#: Series styles: colour, line style, marker.  Colours are distinct in hue and in
#: lightness; line styles and markers carry the distinction in greyscale.
_COLOURS = ("#1f3b73", "#b5541c", "#2f7d4a", "#7b3f8c", "#8a6d12", "#3d3d3d", "#1d7f8c", "#a12f4b")
_LINES = ("-", "--", "-.", ":", (0, (6, 2, 1, 2, 1, 2)), (0, (1, 1)), (0, (8, 3)), (0, (3, 1, 1, 1)))
_MARKERS = ("o", "s", "^", "D", "v", "P", "X", "h")


def series_style(i: int) -> dict:
    """Line keyword arguments for the i-th series (colour, line style, marker).

    >>> s = series_style(1)
    >>> s["linestyle"], s["marker"]
    ('--', 's')
    """
    return dict(color=_COLOURS[i % len(_COLOURS)], linestyle=_LINES[i % len(_LINES)],
                marker=_MARKERS[i % len(_MARKERS)], linewidth=1.8, markersize=5.5,
                markerfacecolor="white", markeredgewidth=1.3)


def _figure(title: str) -> tuple[Figure, object]:
    fig = Figure(figsize=FIGSIZE, layout="constrained")
    ax = fig.add_subplot()
    ax.set_title(title, fontsize=12, loc="left")
    ax.grid(True, color="#d0d0d0", linewidth=0.6)
    ax.tick_params(labelsize=10)
    return fig, ax


def _markevery(n: int) -> int:
    return max(1, n // 12)


def render(fig: Figure, fmt: str, dpi: int = PNG_DPI) -> bytes:
    """The figure as PNG or SVG bytes."""
    buf = io.BytesIO()
    FigureCanvasAgg(fig)     # this figure only: the user's matplotlib backend is never switched
    kw = {"dpi": dpi} if fmt == "png" else {"metadata": {"Date": None}}
    fig.savefig(buf, format=fmt, **kw)
    return buf.getvalue()


# ============================================================================ figures
def conversion_vs_temperature(T: np.ndarray, curves: Sequence[tuple[str, np.ndarray]], *, key: str,
                              target: float | None = None,
                              design_points: Iterable[tuple[str, float, float]] = (),
                              title: str = "", approach: float = 0.0, bands: Sequence = (),
                              intervals: Sequence[tuple[object, int]] = ()) -> Figure:
    """Equilibrium conversion of ``key`` against temperature, one curve per series.

    With ``bands`` and ``intervals`` the figure also carries the uncertainty from the
    species data: each band is a light grey, hatched fill with dashed edges under its
    curve (one legend entry for all), each interval a horizontal error bar with a diamond
    at the design temperature, so neither rests on colour.

    Parameters
    ----------
    T : ndarray, shape (n,)
        Operating temperature [K].
    curves : sequence of (label, conversion)
        Conversion [-] at each T, shape (n,), NaN where not converged.
    key : str
        Key reactant (axis label).
    target : float, optional
        Target conversion [-], drawn as a horizontal line.
    design_points : iterable of (label, T [K], conversion [-])
        Points marked and labelled on the plot (answers of target questions); keep the
        labels short (e.g. the temperature).
    approach : float
        Approach margin [K] used, noted in the axis label.
    bands : sequence of eqdesign.solve.studies.uncertainty.Band, optional
        Interval of the conversion [-] against operating temperature [K] (one per curve).
    intervals : sequence of (TemperatureUncertainty, index[, colour]), optional
        Temperature answers [K] with their intervals, marked at the target conversion (in
        the colour of their curve; the caps and the labels of ``design_points`` carry the
        numbers in greyscale).
    """
    fig, ax = _figure(title or f"Equilibrium conversion of {key} against temperature")
    x = celsius(T)
    for i, band in enumerate(bands):
        draw_band(ax, band, label=f"data uncertainty: {band.label}" if i == 0 else "_nolegend_",
                  nominal_label=None, percent=True, celsius=True, alpha=0.4, edge="0.5")
    for i, (label, conv) in enumerate(curves):
        ax.plot(x, 100.0 * np.asarray(conv, dtype=float), label=label, markevery=_markevery(x.size),
                **series_style(i))
    if target is not None:
        ax.axhline(100.0 * target, color="black", linewidth=1.2, linestyle=(0, (4, 3)),
                   label=f"target {100 * target:.4g} %")
    design_points = list(design_points)
    step = 11 * max((lab.count("\n") + 1 for lab, _, _ in design_points), default=1) + 2
    for j, (label, T_pt, x_pt) in enumerate(design_points):
        if not (np.isfinite(T_pt) and np.isfinite(x_pt)):
            continue
        ax.plot([T_pt - ZERO_CELSIUS], [100.0 * x_pt], marker="*", markersize=14, color="black",
                markerfacecolor="#f2c14e", linestyle="none", zorder=5,
                label="design point" if j == 0 else None)
        ax.annotate(label, (T_pt - ZERO_CELSIUS, 100.0 * x_pt), textcoords="offset points",
                    xytext=(0, -16 - step * (j % 2)), ha="center", va="top", fontsize=9,
                    bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.8))
    for item in intervals:
        answer, index = item[0], item[1]
        # a zero-width interval may put an end a rounding error past the answer; matplotlib
        # refuses negative error-bar lengths, so the ends are clipped to the answer
        answer = replace(answer, lower=np.fmin(answer.lower, answer.T), upper=np.fmax(answer.upper, answer.T))
        draw_temperature_interval(ax, answer, at=index, percent=True, celsius=True,
                                  color=item[2] if len(item) > 2 else "black")
    ax.set_xlabel("operating temperature [°C]" + (f"  (equilibrium taken with a {approach:g} K approach)"
                                                  if approach else ""), fontsize=11)
    ax.set_ylabel(f"equilibrium conversion of {key} [%]", fontsize=11)
    handles, labels = ax.get_legend_handles_labels()
    seen: dict = {}
    for h, lab in zip(handles, labels):          # one entry per label (intervals repeat theirs)
        seen.setdefault(lab, h)
    ax.legend(list(seen.values()), list(seen), fontsize=9, loc="best", frameon=True)
    return fig


def ln_k_against_inverse_temperature(T: np.ndarray, series: Sequence[tuple[str, np.ndarray]], *,
                                     title: str = "") -> Figure:
    """ln K against 1000/T for each reaction (a straight line when ΔrH° is constant).

    Parameters
    ----------
    T : ndarray
        Temperature [K].
    series : sequence of (label, ln K)
        Natural logarithm of the dimensionless K (1 bar standard state) at each T.
    """
    fig, ax = _figure(title or "Equilibrium constants (van 't Hoff plot)")
    inv = 1000.0 / np.asarray(T, dtype=float)
    for i, (label, lnk) in enumerate(series):
        ax.plot(inv, lnk, label=label, markevery=_markevery(inv.size), **series_style(i))
    ax.set_xlabel("1000 K / T [-]", fontsize=11)
    ax.set_ylabel("ln K [-]  (standard state 1 bar)", fontsize=11)
    top = ax.secondary_xaxis("top", functions=(lambda v: 1000.0 / np.maximum(v, 1e-9) - ZERO_CELSIUS,
                                               lambda c: 1000.0 / np.maximum(c + ZERO_CELSIUS, 1e-9)))
    top.set_xlabel("temperature [°C]", fontsize=10)
    ax.legend(fontsize=9, loc="best")
    return fig


def composition_vs_temperature(T: np.ndarray, fractions: Sequence[tuple[str, np.ndarray]], *,
                               pressure: float, title: str = "", log_scale: bool = False) -> Figure:
    """Equilibrium outlet mole fractions against temperature at one pressure.

    Parameters
    ----------
    T : ndarray
        Operating temperature [K].
    fractions : sequence of (species, mole fraction)
        Gas-phase mole fraction [-] of each species at each T.
    pressure : float
        Pressure [Pa] (title).
    log_scale : bool
        Logarithmic mole-fraction axis (for trace species).
    """
    fig, ax = _figure(title or f"Equilibrium outlet composition at {pressure / 1e5:.4g} bar")
    x = celsius(T)
    for i, (name, y) in enumerate(fractions):
        ax.plot(x, y, label=name, markevery=_markevery(x.size), **series_style(i))
    if log_scale:
        ax.set_yscale("log")
    ax.set_xlabel("operating temperature [°C]", fontsize=11)
    ax.set_ylabel("gas mole fraction [-]", fontsize=11)
    ax.legend(fontsize=9, loc="best", ncol=2)
    return fig


def conversion_temperature_diagram(curves: Sequence[tuple[str, np.ndarray, np.ndarray]],
                                   bed_lines: Sequence[tuple[np.ndarray, np.ndarray]],
                                   cooling_lines: Sequence[tuple[np.ndarray, np.ndarray]] = (), *,
                                   key: str, target: float | None = None, title: str = "") -> Figure:
    """Conversion-temperature diagram of staged adiabatic beds with interstage cooling.

    When two or more later beds crowd near full conversion, a second panel on the right
    shows them enlarged.

    Parameters
    ----------
    curves : sequence of (label, T, conversion)
        Equilibrium curves: temperature [K] and equilibrium conversion [-] (one per gas
        composition entering a section of beds).
    bed_lines : sequence of (T, conversion)
        Each bed's adiabatic operating line from inlet to outlet, temperature [K] and
        overall conversion [-].
    cooling_lines : sequence of (T, conversion)
        Interstage cooling at constant conversion, temperature [K] and conversion [-].
    target : float, optional
        Overall target conversion [-].
    """
    later = [(T, x) for T, x in bed_lines[1:] if np.size(x) and float(np.asarray(x)[0]) >= 0.85]
    zoom = len(later) >= 2
    fig = Figure(figsize=FIGSIZE, layout="constrained")
    if zoom:
        ax, ins = fig.subplots(1, 2, gridspec_kw={"width_ratios": [2.3, 1.0]})
    else:
        ax, ins = fig.add_subplot(), None
    ax.set_title(title or f"Conversion-temperature diagram ({key})", fontsize=12, loc="left")
    for a in (ax, ins):
        if a is None:
            continue
        a.grid(True, color="#d0d0d0", linewidth=0.6)
        a.tick_params(labelsize=10)
        _draw_beds(a, curves, bed_lines, cooling_lines, target)
        a.set_xlabel("gas temperature [°C]", fontsize=11)
    ax.set_ylabel(f"overall conversion of {key} [%]", fontsize=11)
    if ins is not None:
        T_lo = min(float(np.nanmin(T)) for T, _ in later) - ZERO_CELSIUS
        T_hi = max(float(np.nanmax(T)) for T, _ in later) - ZERO_CELSIUS
        x0 = min(float(np.nanmin(x)) for _, x in later)
        x_hi = max(float(np.nanmax(x)) for _, x in later)
        pad_T = 0.1 * max(T_hi - T_lo, 5.0)
        pad_x = 0.1 * max(100.0 * (x_hi - x0), 0.5)
        ins.set_xlim(T_lo - pad_T, T_hi + pad_T)
        ins.set_ylim(100.0 * x0 - pad_x, min(100.0 * x_hi + pad_x, 100.5))
        first = len(bed_lines) - len(later) + 1
        ins.set_title(f"beds {first}-{len(bed_lines)} enlarged", fontsize=11, loc="left")
        ins.set_ylabel(f"overall conversion of {key} [%]", fontsize=10)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=9, loc="outside lower center", ncol=4, frameon=False)
    return fig


def _draw_beds(ax, curves, bed_lines, cooling_lines, target) -> None:
    eq_styles = ("-", (0, (7, 2)), (0, (3, 1, 1, 1)))
    for i, (label, T, x) in enumerate(curves):
        ax.plot(celsius(T), 100.0 * np.asarray(x, dtype=float), color="black", linewidth=2.2,
                linestyle=eq_styles[i % len(eq_styles)], label=f"equilibrium, {label}")
    for i, (T, x) in enumerate(bed_lines):
        T_b = celsius(T)
        x_b = 100.0 * np.asarray(x, dtype=float)
        ax.plot(T_b, x_b, label=f"bed {i + 1}, adiabatic", markevery=[0, len(T_b) - 1] if len(T_b) > 1 else None,
                **series_style(i + 1))
        if len(T_b):
            ax.annotate(f"bed {i + 1}", (T_b[-1], x_b[-1]), textcoords="offset points", xytext=(6, -4),
                        fontsize=9, annotation_clip=True)
    for i, (T, x) in enumerate(cooling_lines):
        ax.plot(celsius(T), 100.0 * np.asarray(x, dtype=float), color="#6f6f6f", linewidth=1.3,
                linestyle=(0, (1.5, 1.5)), label="interstage cooling" if i == 0 else None)
    if target is not None:
        ax.axhline(100.0 * target, color="black", linewidth=1.0, linestyle=(0, (4, 3)),
                   label=f"target {100 * target:.4g} %")


def pressure_option_comparison(pressures: np.ndarray, series: Sequence[tuple[str, np.ndarray]], *,
                               key: str, title: str = "") -> Figure:
    """Equilibrium conversion at each pressure option, one series per gas model and temperature.

    Parameters
    ----------
    pressures : ndarray
        Pressure options [Pa].
    series : sequence of (label, conversion)
        Conversion [-] at each pressure option.
    """
    fig, ax = _figure(title or f"Pressure options: equilibrium conversion of {key}")
    p_bar = np.asarray(pressures, dtype=float) / 1e5
    for i, (label, conv) in enumerate(series):
        ax.plot(p_bar, 100.0 * np.asarray(conv, dtype=float), label=label, **series_style(i))
    ax.set_xticks(p_bar)
    ax.set_xticklabels([f"{p:g}" for p in p_bar])
    ax.set_xlabel("pressure option [bar]", fontsize=11)
    ax.set_ylabel(f"equilibrium conversion of {key} [%]", fontsize=11)
    ax.legend(fontsize=9, loc="best")
    return fig


def carbon_limit_map(T: np.ndarray, ratio: np.ndarray, carbon_forms: np.ndarray, *,
                     ratio_label: str, boundary: np.ndarray | None = None, pressure: float | None = None,
                     title: str = "") -> Figure:
    """Where graphite is thermodynamically stable, over temperature × feed ratio.

    Parameters
    ----------
    T : ndarray, shape (nT,)
        Temperature [K].
    ratio : ndarray, shape (nR,)
        Feed ratios evaluated [mol/mol].
    carbon_forms : ndarray of bool, shape (nT, nR)
        True where graphite is stable at equilibrium (marked ×; no carbon: ○).
    ratio_label : str
        Axis name of the ratio, e.g. ``"steam-to-carbon ratio"``.
    boundary : ndarray, shape (nT,), optional
        Critical ratio at each temperature [mol/mol]: graphite is stable below it.  The
        region below is hatched; +inf means carbon over the whole ratio range, -inf none.
    pressure : float, optional
        Pressure [Pa] (title).
    """
    fig, ax = _figure(title or ("Carbon limit" + (f" at {pressure / 1e5:.4g} bar" if pressure else "")))
    x = celsius(T)
    r = np.asarray(ratio, dtype=float)
    forms = np.asarray(carbon_forms, dtype=bool)
    X, Y = np.meshgrid(x, r, indexing="ij")
    lo, hi = float(r.min()), float(r.max())
    pad = 0.04 * (hi - lo)
    if boundary is not None:
        b = np.asarray(boundary, dtype=float)
        top = np.clip(np.where(np.isnan(b), lo - pad, b), lo - pad, hi + pad)
        ax.fill_between(x, lo - pad, top, facecolor="#ead7bf", edgecolor="#7a4a1d", hatch="///", linewidth=0.0,
                        label="graphite stable (carbon forms)")
        finite = np.isfinite(b)
        ax.plot(x[finite], b[finite], color="black", linewidth=2.2, label="carbon limit (critical ratio)")
    ax.plot(X[forms], Y[forms], linestyle="none", marker="x", markersize=5, color="#7a4a1d",
            label="evaluated: carbon")
    ax.plot(X[~forms], Y[~forms], linestyle="none", marker="o", markersize=3.5, markerfacecolor="white",
            color="#1f3b73", label="evaluated: no carbon")
    ax.set_ylim(lo - pad, hi + pad)
    ax.set_xlabel("temperature [°C]", fontsize=11)
    ax.set_ylabel(f"{ratio_label} [mol/mol]", fontsize=11)
    ax.legend(fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=4, frameon=False)
    return fig
