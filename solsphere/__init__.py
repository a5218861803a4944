"""solsphere: Hansen solubility spheres from bench results.

Fit a sphere (centre δD, δP, δH and radius R0, in MPa½) to dissolves / partly / does-not
results, rank untried solvents, design blends that land inside, find replacements, say
what to test next, and share the picture. Predictions are guides, not guarantees: confirm
at the bench and read each solvent's safety data sheet.

The public API, for scripts and notebooks::

    import solsphere as ss
    trials = ss.read_trials("results.csv")            # or a pandas DataFrame
    model = ss.SphereModel().fit(trials)               # scikit-learn style
    pool = ss.load_library().common()                  # the curated common solvents
    ss.rank_solvents(pool, model.centre_, model.R0_, tested=trials.names, top=10).to_frame()
    ss.screen_blends(pool, model.centre_, model.R0_, top=10).to_frame()
    ss.map3d(model.result_)                            # the 3D figure (plotly)

Every computation returns one result object with ``to_frame()``, ``to_dict()``, a plain
text report (``print``) and a notebook view.
"""

__version__ = "0.1.0"

from solsphere.design.pairs import Blend, BlendScreen, screen_blends  # noqa: E402
from solsphere.design.ranking import Ranking, rank_solvents  # noqa: E402
from solsphere.design.substitution import Substitution, find_substitutes  # noqa: E402
from solsphere.design.triples import TripleScreen, screen_triples  # noqa: E402
from solsphere.errors import FitError, InputError, NotFittedError, SolsphereError  # noqa: E402
from solsphere.io.project import Project, load_any  # noqa: E402
from solsphere.io.trials import Trials, read_trials  # noqa: E402
from solsphere.library.table import Library, Solvent, load_library  # noqa: E402
from solsphere.mixtures.drying import DryingPath, drying_path  # noqa: E402
from solsphere.mixtures.flash import blend_flash_point  # noqa: E402
from solsphere.models.classic import SphereFitResult, SphereModel  # noqa: E402
from solsphere.models.graded import GradedFitResult, GradedSphereModel  # noqa: E402
from solsphere.models.twosphere import TwoSphereFitResult, TwoSphereModel  # noqa: E402
from solsphere.report.figures import map3d, projections  # noqa: E402
from solsphere.uncertainty.bootstrap import Bootstrap, Influence, bootstrap, influence  # noqa: E402
from solsphere.uncertainty.nexttrials import Suggestions, suggest_next  # noqa: E402
from solsphere.uncertainty.posterior import Posterior, sample_posterior  # noqa: E402
from solsphere.workflows import (BlendDesign, candidate_pool, design_blends,  # noqa: E402
                                 find_replacements, fit_project)

__all__ = [
    "__version__",
    # data in
    "load_library", "Library", "Solvent", "read_trials", "Trials", "Project", "load_any",
    # models
    "SphereModel", "SphereFitResult", "GradedSphereModel", "GradedFitResult",
    "TwoSphereModel", "TwoSphereFitResult",
    # uncertainty
    "bootstrap", "Bootstrap", "influence", "Influence", "sample_posterior", "Posterior",
    "suggest_next", "Suggestions",
    # design and mixtures
    "rank_solvents", "Ranking", "screen_blends", "BlendScreen", "Blend", "screen_triples",
    "TripleScreen", "find_substitutes", "Substitution", "drying_path", "DryingPath",
    "blend_flash_point",
    # workflows (what the CLI and the app do)
    "candidate_pool", "design_blends", "BlendDesign", "find_replacements", "fit_project",
    # figures
    "map3d", "projections",
    # errors
    "SolsphereError", "InputError", "FitError", "NotFittedError",
]
