"""Drawing the data-uncertainty band on a matplotlib Axes (kept apart from the calculation).

The band must stay readable when printed in greyscale: the interval is a light grey fill
*and* a hatch *and* dashed edge lines, and the nominal curve is a solid black line, so no
information rests on colour alone.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from .numbers import ZERO_CELSIUS

if TYPE_CHECKING:     # pragma: no cover
    from matplotlib.axes import Axes

    from ..studies.uncertainty import Band


def draw_band(ax: "Axes", band: "Band", *, label: str | None = None, nominal_label: str | None = "nominal data",
              fill: str = "0.80", edge: str = "0.35", hatch: str = "////", alpha: float = 0.6,
              line: str = "black", percent: bool = False, celsius: bool = False,
              show_median: bool = False) -> dict:
    """Draw an uncertainty band and its nominal curve on ``ax``.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    band : Band
        From :meth:`eqdesign.solve.studies.uncertainty.EquilibriumUncertainty.band`.
    label : str, optional
        Legend text of the band (default :attr:`Band.label`, e.g. "95 % interval (Monte
        Carlo, 400 draws)").
    nominal_label : str | None
        Legend text of the nominal curve; None draws no nominal curve (when the caller
        already drew it).
    fill, edge, line : str
        Greys (matplotlib grey levels "0.0"-"1.0" or any colour) of the fill, of the hatch
        and dashed edges, and of the nominal curve.
    hatch : str
        Hatch pattern of the band ("" for none).
    alpha : float
        Opacity of the fill.
    percent : bool
        Plot the quantity ×100 (conversion in %); the y label then says [%].
    celsius : bool
        Temperature axis in °C (x − 273.15), as on the report's conversion plots.
    show_median : bool
        Also draw the median (dotted), useful when it differs visibly from the nominal curve.

    Returns
    -------
    dict
        The artists: ``"band"``, ``"lower"``, ``"upper"``, ``"nominal"`` (and ``"median"``).

    Examples
    --------
    >>> import matplotlib
    >>> matplotlib.use("Agg")
    >>> import matplotlib.pyplot as plt
    >>> from eqdesign.solve import Band
    >>> b = Band(x=np.array([600., 700.]), nominal=np.array([.5, .3]), lower=np.array([.45, .26]),
    ...          median=np.array([.5, .3]), upper=np.array([.55, .34]), level=0.95,
    ...          quantity="conversion N2", unit="-", x_label="temperature [K]", method="linear")
    >>> fig, ax = plt.subplots()
    >>> sorted(draw_band(ax, b))
    ['band', 'lower', 'nominal', 'upper']
    >>> ax.get_ylabel()
    'conversion N2 [-]'
    >>> plt.close(fig)
    """
    k = 100.0 if percent else 1.0
    x = np.asarray(band.x, dtype=float) - (ZERO_CELSIUS if celsius else 0.0)
    lo, hi = k * np.asarray(band.lower, dtype=float), k * np.asarray(band.upper, dtype=float)
    finite = np.isfinite(lo) & np.isfinite(hi)
    art = {}
    art["band"] = ax.fill_between(x, lo, hi, where=finite, facecolor=fill, edgecolor=edge, hatch=hatch,
                                  alpha=alpha, linewidth=0.0, label=label or band.label, zorder=1)
    art["lower"], = ax.plot(x, lo, linestyle="--", color=edge, linewidth=0.9, zorder=2)
    art["upper"], = ax.plot(x, hi, linestyle="--", color=edge, linewidth=0.9, zorder=2)
    if nominal_label is not None:
        art["nominal"], = ax.plot(x, k * np.asarray(band.nominal, dtype=float), color=line, linewidth=1.6,
                                  label=nominal_label, zorder=3)
    if show_median:
        art["median"], = ax.plot(x, k * np.asarray(band.median, dtype=float), color=line, linestyle=":",
                                 linewidth=1.2, label="median of the draws", zorder=3)
    if not ax.get_xlabel():
        ax.set_xlabel("temperature [°C]" if celsius else band.x_label)
    if not ax.get_ylabel():
        ax.set_ylabel(f"{band.quantity} [{'%' if percent else band.unit}]")
    return art


def draw_temperature_interval(ax: "Axes", answer, *, at=None, percent: bool = False, celsius: bool = False,
                              color: str = "black") -> dict:
    """Mark an inverse answer and its interval on a conversion-temperature plot.

    A horizontal error bar at the target conversion from the lower to the upper end of the
    temperature interval, with a diamond at the nominal answer.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    answer : TemperatureUncertainty
        From :func:`eqdesign.solve.studies.intervals.temperature_interval`.
    at : int, optional
        Which question, for an array answer.
    percent : bool
        Conversion axis in % (as in :func:`draw_band`).
    celsius : bool
        Temperature axis in °C (as in :func:`draw_band`).
    color : str

    Returns
    -------
    dict
        ``{"interval": ErrorbarContainer}`` (empty if the answer is not finite).
    """
    sel = (lambda v: float(np.asarray(v)[at]) if at is not None else float(np.asarray(v)))   # noqa: E731
    T, lo, hi, tg = sel(answer.T), sel(answer.lower), sel(answer.upper), sel(answer.target)
    if not np.isfinite(T):
        return {}
    y = tg * (100.0 if percent else 1.0)
    x = T - (ZERO_CELSIUS if celsius else 0.0)
    left = T - lo if np.isfinite(lo) else 0.0
    right = hi - T if np.isfinite(hi) else 0.0
    cont = ax.errorbar([x], [y], xerr=[[left], [right]], fmt="D", color=color, markerfacecolor="white",
                       capsize=4, linewidth=1.2, zorder=4,
                       label=f"T for {100 * tg:.3g} % ({100 * answer.level:.3g} % interval)")
    return {"interval": cont}


__all__ = ["draw_band", "draw_temperature_interval"]
