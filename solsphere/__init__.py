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

import importlib

__version__ = "0.1.0"

#: Where each public name lives. The names load on first use (PEP 562), so that
#: ``import solsphere`` and the command line's ``--help`` do not import scipy and plotly.
API = {
    "solsphere.design.pairs": ("Blend", "BlendScreen", "screen_blends"),
    "solsphere.design.ranking": ("Ranking", "rank_solvents"),
    "solsphere.design.substitution": ("Substitution", "find_substitutes"),
    "solsphere.design.triples": ("TripleScreen", "screen_triples"),
    "solsphere.errors": ("FitError", "InputError", "NotFittedError", "SolsphereError"),
    "solsphere.io.project": ("Project", "load_any"),
    "solsphere.io.trials": ("Trials", "read_trials"),
    "solsphere.library.table": ("Library", "Solvent", "load_library"),
    "solsphere.mixtures.drying": ("DryingPath", "drying_path"),
    "solsphere.mixtures.flash": ("blend_flash_point",),
    "solsphere.mixtures.mixture": ("MixtureReport", "analyse_mixture"),
    "solsphere.estimate": ("Estimates", "estimate", "plan_from_structure"),
    "solsphere.models.classic": ("SphereFitResult", "SphereModel"),
    "solsphere.models.graded": ("GradedFitResult", "GradedSphereModel"),
    "solsphere.models.twosphere": ("TwoSphereFitResult", "TwoSphereModel"),
    "solsphere.report.figures": ("map3d", "projections"),
    "solsphere.report.share": ("ShareReport", "build_share"),
    "solsphere.report.export": ("write_images",),
    "solsphere.uncertainty.bootstrap": ("Bootstrap", "Influence", "bootstrap", "influence"),
    "solsphere.uncertainty.nexttrials": ("Suggestions", "suggest_next"),
    "solsphere.uncertainty.posterior": ("Posterior", "sample_posterior"),
    "solsphere.workflows": ("BlendDesign", "candidate_pool", "design_blends",
                            "find_replacements", "fit_project"),
}
_WHERE = {name: module for module, names in API.items() for name in names}


def __getattr__(name: str):
    if name not in _WHERE:
        raise AttributeError(f"module 'solsphere' has no attribute {name!r}")
    value = getattr(importlib.import_module(_WHERE[name]), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__():
    return sorted(set(globals()) | set(_WHERE))


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
    "blend_flash_point", "analyse_mixture", "MixtureReport",
    # structure-based estimates (needs the optional extra solsphere[structure])
    "estimate", "Estimates", "plan_from_structure",
    # workflows (what the CLI and the app do)
    "candidate_pool", "design_blends", "BlendDesign", "find_replacements", "fit_project",
    # figures and the share report
    "map3d", "projections", "build_share", "ShareReport", "write_images",
    # errors
    "SolsphereError", "InputError", "FitError", "NotFittedError",
]
