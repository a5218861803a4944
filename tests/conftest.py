"""Fixtures shared by the test files (one definition each)."""

from __future__ import annotations

from pathlib import Path

import pytest

from solsphere.library.table import load_library

ROOT = Path(__file__).resolve().parent.parent
#: The packaged demo: an invented scenario, not measured data.
DEMO = ROOT / "data" / "demo" / "varnish_binder.csv"


@pytest.fixture(scope="session")
def lib():
    """The packaged solvent library (read once per process, as the library caches it)."""
    return load_library()


@pytest.fixture(scope="session")
def demo_path() -> Path:
    """The invented demo results file."""
    return DEMO


#: Tests that take several seconds each (statistical runs, posterior sampling, whole-table
#: rebuilds, child processes): marked ``slow`` so that ``make test-fast`` stays a quick
#: loop; ``make test`` (and CI) runs them all. Measured with ``pytest --durations``.
HEAVY = {
    "tests/test_posterior.py::test_coverage_small",
    "tests/test_posterior.py::test_samples_are_reproducible_and_describe_the_panel",
    "tests/test_posterior.py::test_few_goods_give_wide_intervals_and_say_why",
    "tests/test_reference_library.py::test_rebuild_matches_committed_table",
    "tests/test_cli_process.py::test_fraction_limit_as_percent_as_in_the_app",
    "tests/test_cli_process.py::test_three_component_blends_respect_fraction_limit",
    "tests/test_app_logic.py::test_next_trials_are_the_library_suggestions_and_recheck_the_influence",
    "tests/test_app_logic.py::test_share_limits_for_names_with_commas",
    "tests/test_app_logic.py::test_posterior_intervals_in_the_app_are_the_library_posterior",
    "tests/test_common_pool.py::test_next_trials_pool_follows_the_checkbox",
    "tests/test_cli_uncertainty.py::test_fit_and_rank_with_posterior_samples",
    "tests/test_confidence.py::test_reproducible_and_independent_of_processes",
    "tests/test_confidence.py::test_works_from_a_worker_thread",
    "tests/test_cli.py::test_project_partial_setting_is_kept",
    "tests/test_estimate.py::test_numpy_trees_match_scikit_learn",
    "tests/test_app_workers.py::test_the_request_body_limit_holds_in_the_workers",
    "tests/test_app_workers.py::test_two_workers_serve_the_library_fit_and_stop",
}
#: Parametrised cases of these tests whose id contains one of the words are heavy too.
HEAVY_CASES = {
    "tests/test_honest_uncertainty.py::test_degenerate_panels_give_a_message_or_a_finite_result": ("next-",),
    "tests/test_uncertainty_limits.py::test_degenerate_panels_through_the_command_line": ("collinear",),
}


def pytest_collection_modifyitems(config, items):
    for item in items:
        base = item.nodeid.split("[", 1)[0]
        if base in HEAVY or any(w in item.nodeid for w in HEAVY_CASES.get(base, ())):
            item.add_marker(pytest.mark.slow)
