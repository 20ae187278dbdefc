"""How much work a checked case asks for, and the budget a case must stay within.

``eqdesign check`` and ``eqdesign run`` refuse a case whose estimated work exceeds the
budget, with the numbers and how to reduce them, instead of running for hours or filling
the disk.  The estimate counts, per study, equilibrium states solved × species × draws
(the Newton kernel's cost grows with both), table cells written and figures drawn:

=========================  ==========================================================
study                      equilibrium states (× draws for data uncertainty)
=========================  ==========================================================
conversion map             temperatures × pressure options (+ temperatures × ratios)
uncertainty band           min(temperatures, 41) × pressure options × draws
target question            pressures answered × about 60 root-search evaluations
                           (× draws for the interval on a temperature target)
pressure options           temperatures × pressure options × gas models
staged beds                beds × about 200 energy-balance evaluations
carbon limit               temperatures × ratios, plus temperatures × 60 for the boundary
=========================  ==========================================================

Draws are ``samples`` for Monte Carlo and 2 × species + 1 for the linearised method.
The budget is :data:`MAX_SPECIES_STATES` (about twelve times the largest demo case, the
ammonia loop with its data-uncertainty band) and :data:`MAX_TABLE_CELLS` (about 12 MB of
tables); cases/README.md states it for users.  Bigger studies: thin the grids
(``--coarse`` gives a quick look at a case within the budget) or, when it arrives, run
on a distributed scheduler.
"""
from __future__ import annotations

from dataclasses import dataclass

from .schema import Case
from .yaml_lines import CaseProblem

#: Most species × equilibrium states × draws a case may ask for.
MAX_SPECIES_STATES = 10_000_000
#: Most table cells a case may write (about 12 MB of CSV at some 12 bytes a cell).
MAX_TABLE_CELLS = 1_000_000
#: Temperatures of a data-uncertainty band (the run thins the grid to this many).
BAND_POINTS = 41
#: Equilibrium evaluations of one bracketed root search (an estimate).
ROOT_EVALUATIONS = 60
#: Equilibrium evaluations of one adiabatic bed (an estimate).
BED_EVALUATIONS = 200


@dataclass(frozen=True)
class StudyWork:
    """Estimated work of one study of a case.

    Attributes
    ----------
    study : str
        Name of the study, e.g. ``"conversion map"``.
    key : str
        Key path of the study in the case file (where to reduce it).
    states : int
        Equilibrium states solved, draws included [-].
    species_states : int
        ``states`` × species of the system [-].
    table_cells : int
        Cells of the tables written [-].
    figures : int
        Figures drawn (each in every plot format asked for) [-].
    reduce : str
        How to make it smaller.
    """

    study: str
    key: str
    states: int
    species_states: int
    table_cells: int
    figures: int
    reduce: str


@dataclass(frozen=True)
class WorkEstimate:
    """Estimated work of a whole case (see the module docstring for the counts).

    ``within_budget`` is False when ``species_states`` > :data:`MAX_SPECIES_STATES` or
    ``table_cells`` > :data:`MAX_TABLE_CELLS`; ``problems(file)`` then explains it.
    """

    studies: tuple

    @property
    def species_states(self) -> int:
        return sum(s.species_states for s in self.studies)

    @property
    def table_cells(self) -> int:
        return sum(s.table_cells for s in self.studies)

    @property
    def figures(self) -> int:
        return sum(s.figures for s in self.studies)

    @property
    def within_budget(self) -> bool:
        return self.species_states <= MAX_SPECIES_STATES and self.table_cells <= MAX_TABLE_CELLS

    def problems(self, file: str) -> list:
        """One :class:`CaseProblem` per budget exceeded, naming the largest studies."""
        out = []
        for total, limit, attr, what in (
                (self.species_states, MAX_SPECIES_STATES, "species_states", "species × equilibrium states × draws"),
                (self.table_cells, MAX_TABLE_CELLS, "table_cells", "table cells")):
            if total <= limit:
                continue
            ranked = sorted(self.studies, key=lambda s: getattr(s, attr), reverse=True)
            worst = [s for s in ranked if getattr(s, attr) > 0][:2]
            detail = "; ".join(f"{s.study} ({s.key}) {getattr(s, attr):,}: {s.reduce}" for s in worst)
            out.append(CaseProblem(file, worst[0].key if worst else "studies",
                                   f"the case asks for {total:,} {what}, more than the budget of {limit:,} "
                                   f"(see cases/README.md); largest: {detail}. A distributed scheduler (coming) "
                                   "will lift the budget; --coarse gives a quick look only at a case within it"))
        return out


def estimate_work(case: Case) -> WorkEstimate:
    """Estimated work of ``case`` at full resolution (see the module docstring)."""
    n_species = len(case.species)
    n_T = case.temperature.points
    n_P = len(case.pressures)
    st = case.studies
    figure_formats = max(len(case.output.plot_formats), 1) if case.output.plot_formats else 0
    draws = 0
    if st.uncertainty is not None:
        draws = st.uncertainty.samples if st.uncertainty.method == "monte-carlo" else 2 * n_species + 1
    out = []

    def add(study, key, states, cells, figures, reduce):
        out.append(StudyWork(study, key, int(states), int(states) * n_species, int(cells),
                             int(figures) * figure_formats, reduce))

    cm = st.conversion_map
    if cm is not None:
        add("conversion map", "conditions", n_T * n_P, n_T * n_P * (n_species + 6), 2,
            "fewer conditions.temperature.points or pressure options")
        if cm.feed_ratio is not None:
            n_R = len(cm.feed_ratio.values)
            add("feed-ratio map", "studies.conversion_map.feed_ratio", n_T * n_R,
                n_T * n_R * (n_species + 7) + n_T * (n_R + 1), 1, "fewer feed-ratio values or temperature points")
        if draws:
            band = min(n_T, BAND_POINTS) * n_P
            add("uncertainty band", "studies.uncertainty", band * draws, band * 6, 1,
                "fewer samples (400 give 95 % intervals to about ±2 %)")
    for i, q in enumerate(st.targets):
        n_answers = n_P if q.solve_for == "temperature" and q.pressure is None else 1
        states = n_answers * ROOT_EVALUATIONS * (1 + (draws if q.solve_for == "temperature" else 0))
        add(f"target {q.label!r}", q.key_path, states, n_answers * 12, 0, "fewer samples or pressure options")
    po = st.pressure_options
    if po is not None:
        states = len(po.temperatures) * n_P * len(po.gas_models)
        add("pressure options", "studies.pressure_options", states, states * (n_species + 6), 1,
            "fewer temperatures or pressure options")
    sb = st.staged_beds
    if sb is not None:
        beds = sb.beds or 8
        add("staged beds", "studies.staged_beds", beds * BED_EVALUATIONS, beds * (n_species + 8), 1, "fewer beds")
    cl = st.carbon_limit
    if cl is not None:
        n_Tc, n_R = cl.temperature.points, len(cl.feed_ratio.values)
        add("carbon limit", "studies.carbon_limit", n_Tc * n_R + n_Tc * ROOT_EVALUATIONS, n_Tc * n_R * 5, 1,
            "fewer carbon_limit temperature points or feed-ratio values")
    return WorkEstimate(tuple(out))
