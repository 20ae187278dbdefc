"""The data-uncertainty section of the HTML report.
"""
from __future__ import annotations

import html
from typing import Mapping, Sequence

import numpy as np

from ...thermo.data_uncertainty import UncertaintyDefaults, UncertaintyInputError, bundled_defaults
from ..studies.intervals import TemperatureUncertainty
from ..studies.uncertainty import ASSUMPTIONS, CAUTION, EquilibriumUncertainty, percent_labels
from .numbers import html_number


def _h(x) -> str:
    return html.escape(str(x), quote=True)


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]], caption: str = "", text_cols=()) -> str:
    """An HTML table of pre-escaped cells; ``text_cols`` are left-aligned (class "text")."""
    def cls(j):
        return ' class="text"' if j in text_cols else ""
    out = ["<table>"]
    if caption:
        out.append(f"<caption>{_h(caption)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th{cls(j)}>{_h(h)}</th>" for j, h in enumerate(headers))
               + "</tr></thead><tbody>")
    for r in rows:
        out.append("<tr>" + "".join(f"<td{cls(j)}>{c}</td>" for j, c in enumerate(r)) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


# Long on purpose: half of it is the docstring; the rest writes the section top to bottom.
def html_section(*, temperatures: Sequence[TemperatureUncertainty] = (),
                 equilibrium_result: EquilibriumUncertainty | None = None, figure_svg: str | None = None,
                 title: str = "Uncertainty from the thermodynamic data", top: int = 5,
                 band_points: int = 8, defaults: UncertaintyDefaults | None = None) -> str:
    """A self-contained HTML section (no external references) reporting the propagation.

    Parameters
    ----------
    temperatures : sequence of TemperatureUncertainty
        Inverse answers with intervals (one table row each; a ranking per answer).
    equilibrium_result : EquilibriumUncertainty, optional
        Conversion band over temperature (a table of ``band_points`` temperatures and the
        ranking averaged over the band).
    figure_svg : str, optional
        An SVG of the band plot (e.g. ``matplotlib`` ``savefig(format="svg")`` output);
        embedded inline without its XML declaration, DOCTYPE and metadata.
    title : str
    top : int
        Entries of each ranking shown.
    band_points : int
    defaults : UncertaintyDefaults, optional
        The defaults used (for the citations of key values); the bundled ones by default.

    Returns
    -------
    str
        ``<section class="eqd-uncertainty">...</section>``.

    Examples
    --------
    >>> from eqdesign.solve import temperature_interval
    >>> t = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.2,
    ...                          T_range=(500, 1000), method="linear")
    >>> page = html_section(temperatures=[t])
    >>> page.startswith('<section class="eqd-uncertainty">'), "http" in page, "Caution" in page
    (True, False, True)
    """
    parts = ['<section class="eqd-uncertainty">', f"<h2>{_h(title)}</h2>"]
    first = next(iter(temperatures), None) or equilibrium_result
    if first is None:
        raise UncertaintyInputError("html_section: give temperatures and/or equilibrium_result")
    method = ("Monte Carlo over the data (JCGM 101:2008), "
              f"{first.samples} draws, seed {first.seed}" if first.method == "monte-carlo"
              else "linearised propagation (GUM, JCGM 100:2008) with sensitivity coefficients by finite differences")
    parts.append(f"<p>Method: {_h(method)}; intervals cover {100 * first.level:.3g} % "
                 f"(from the {percent_labels(first.level)[0]} to the {percent_labels(first.level)[1]} "
                 f"point). Assumptions: {_h(ASSUMPTIONS)}.</p>")
    for t in temperatures:
        lo, hi = percent_labels(t.level)
        rows = []
        for r in t.rows():
            rows.append([html_number(100 * r[f"target conversion {t.key} [-]"], ".4g"),
                         html_number(r["P [Pa]"] / 1e5, ".4g"), html_number(r["T [K]"], ".1f"),
                         html_number(r[f"T {lo} [K]"], ".1f"), html_number(r[f"T {hi} [K]"], ".1f"),
                         html_number(r["u(T) [K]"], ".2f")])
        parts.append(_table([f"target conversion {t.key} [%]", "P [bar]", "T [K]", f"T {lo} [K]",
                             f"T {hi} [K]", "u(T) [K]"], rows,
                            caption=f"Temperature for the target conversion of {t.key}"
                            + (f" (approach {t.approach:g} K)" if t.approach else "")))
        if np.any(np.asarray(t.beyond_range) > 0):
            parts.append("<p>Some draws reach the target only outside the search range; widen the range "
                         "to close the interval.</p>")
        parts.append(_ranking_html(t.ranking()[:top], "K", f"Data that move the temperature most ({t.key})"))
    if equilibrium_result is not None:
        e = equilibrium_result
        q = e.quantities[0]
        T = np.asarray(e.T, dtype=float).reshape(-1)
        pick = np.unique(np.linspace(0, T.size - 1, min(band_points, T.size)).round().astype(int))
        lo, hi = percent_labels(e.level)
        rows = []
        flat = {k: np.asarray(v, dtype=float).reshape(-1) for k, v in e.columns(q).items()}
        Pf = np.broadcast_to(np.asarray(e.P, dtype=float), np.shape(e.T)).reshape(-1)
        for i in pick:
            rows.append([html_number(T[i], ".1f"), html_number(Pf[i] / 1e5, ".4g")]
                        + [html_number(v[i], ".4f") for v in flat.values()])
        parts.append(_table(["T [K]", "P [bar]"] + list(flat), rows, caption=f"{q} with its interval"))
        parts.append(_ranking_html(e.ranking(q)[:top], "-", f"Data that move {q} most (averaged over the band)"))
    if figure_svg:
        parts.append(f'<figure class="eqd-uncertainty-band">{_inline_svg(figure_svg)}</figure>')
    data = first.data
    rows = [[_h(d.label), html_number(d.u, ".4g"), _h(d.unit), _h(d.origin)] for d in data]
    parts.append(_table(["datum", "standard uncertainty u", "unit", "source of u"], rows,
                        caption="Standard uncertainties used", text_cols=(0, 2, 3)))
    defaults = defaults or bundled_defaults()
    cited = []
    for d in data:
        for key, ref in defaults.references.items():
            if d.origin.endswith(f" {key}") and isinstance(ref, Mapping) and key not in [c[0] for c in cited]:
                cited.append((key, str(ref.get("cite", key))))
    notes = [f"{_h(k)}: {_h(c)}." for k, c in cited]
    notes.append(f"Class defaults: {_h(defaults.origin)}, where each class states its basis "
                 "(a source, or common practice without a source).")
    parts.append("<p>Sources of the uncertainties. " + " ".join(notes) + "</p>")
    parts.append(f'<p class="caution"><strong>Caution.</strong> {_h(CAUTION)}</p>')
    parts.append("</section>")
    return "\n".join(parts)


def _inline_svg(svg: str) -> str:
    """An SVG document made fit to sit inside HTML: the XML declaration and DOCTYPE (which
    names an external DTD) and the metadata block are dropped; xmlns namespace names stay
    (they are identifiers, never fetched)."""
    start = svg.find("<svg")
    if start < 0:
        raise UncertaintyInputError("figure_svg: no <svg> element found")
    svg = svg[start:]
    a, b = svg.find("<metadata"), svg.find("</metadata>")
    if a >= 0 and b > a:
        svg = svg[:a] + svg[b + len("</metadata>"):]
    return svg


def _ranking_html(ranking, unit: str, caption: str) -> str:
    rows = [[str(e.rank), _h(e.datum.label), html_number(e.datum.u, ".4g") + " " + _h(e.datum.unit),
             html_number(e.contribution, ".3g"), html_number(100 * e.share, ".1f")] for e in ranking]
    return _table(["rank", "datum", "u", f"contribution [{unit}]", "share of variance [%]"], rows, caption,
                  text_cols=(1,))
