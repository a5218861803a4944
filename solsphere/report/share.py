"""The share page: one self-contained HTML file with the map, the fit and the lists."""

from __future__ import annotations

from solsphere.design.pairs import screen_blends
from solsphere.design.ranking import CAUTION, rank_solvents
from solsphere.report import figures
from solsphere.workflows import add_safety_and_drying, blend_notes, candidate_pool

__all__ = ["share_page"]


def share_page(project, fit, library, title: str | None = None, n_blends: int = 5) -> str:
    """The standalone HTML page for a fitted project: 3D map (with the best blends and
    their drying paths), the projections, and the reports."""
    pool, _ = candidate_pool(library)
    tested = list(project.trials.names)
    centre = (fit.dD, fit.dP, fit.dH)
    ranking = rank_solvents(pool, centre, fit.R0, tested=tested)
    blends = screen_blends(pool, centre, fit.R0, top=n_blends)
    bl = add_safety_and_drying(blends, pool, centre, fit.R0, drying=True)
    paths = [{"points": b["drying"]["points"],
              "label": "drying: " + " + ".join(b["solvents"])}
             for b in bl if b.get("drying")]
    fd = fit.to_dict()
    fig3 = figures.map3d(fd, untried=ranking.to_dict()["solvents"], blends=bl, paths=paths)
    fig2 = figures.projections(fd, blends=bl)
    top = rank_solvents(pool, centre, fit.R0, top=15, tested=tested)
    title = title or f"Hansen solubility sphere — {project.trials.source}"
    return figures.share_html(fig3, fig2, str(fit), title=title, caution=CAUTION,
                              extra_sections=[("Untried solvents nearest the sphere", str(top)),
                                              ("Blends", str(blends) + blend_notes(bl, True))])
