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
    "tests/test_app_jobs.py::test_jobs_forked_beside_polling_threads_all_answer",
    "tests/test_app_workers.py::test_two_workers_serve_the_library_fit_and_stop",
    # over 0.8 s each (2 cores, unloaded), measured with the fast set's --junitxml
    "tests/test_app_logic.py::test_bootstrap_in_the_app_is_the_library_bootstrap_of_the_trials",
    "tests/test_app_logic.py::test_constraints_restricted_list_and_temperature",
    "tests/test_app_logic.py::test_figures_draw_the_stored_fit",
    "tests/test_app_logic.py::test_pool_selector_and_allow_worse_reach_the_workflows",
    "tests/test_app_logic.py::test_share_page_is_the_library_page",
    "tests/test_app_workers.py::test_callbacks_leave_module_state_alone",
    "tests/test_atomic_save.py::test_kill_in_the_middle_of_a_save_leaves_the_old_project",
    "tests/test_bad_input.py::test_a_thousand_made_up_names_are_counted_not_each_searched",
    "tests/test_bad_input.py::test_project_cut_anywhere_says_cut_short",
    "tests/test_bad_input.py::test_repeated_rows_make_a_project_fit_can_read",
    "tests/test_blend.py::test_window_endpoints_match_dense_scan",
    "tests/test_cli.py::test_bad_input_exit_code_in_a_real_process",
    "tests/test_cli.py::test_blend_filters_and_exclude_honoured",
    "tests/test_cli.py::test_fit_json_contract_on_demo",
    "tests/test_cli.py::test_fit_json_misfits_are_outside_or_inside_wrongly",
    "tests/test_cli.py::test_save_is_atomic_when_the_write_fails",
    "tests/test_cli.py::test_saved_project_gives_the_same_centre_everywhere",
    "tests/test_cli.py::test_share_json_and_refuses_to_overwrite_data",
    "tests/test_cli_uncertainty.py::test_fit_bootstrap_intervals_are_reproducible",
    "tests/test_cli_uncertainty.py::test_fit_compare_reports_a_recommendation",
    "tests/test_cli_uncertainty.py::test_fit_reports_influence_by_default",
    "tests/test_cli_uncertainty.py::test_graded_and_two_sphere_fits",
    "tests/test_cli_uncertainty.py::test_next_reports_its_engine",
    "tests/test_common_pool.py::test_blend_designer_honours_the_checkbox",
    "tests/test_common_pool.py::test_human_output_says_which_pool",
    "tests/test_common_pool.py::test_next_candidates_shelf_overrides_the_default_pool",
    "tests/test_common_pool.py::test_next_defaults_to_common_solvents",
    "tests/test_confidence.py::test_coverage_small",
    "tests/test_confidence.py::test_influence_against_direct_leave_one_out_refits",
    "tests/test_confidence.py::test_influence_finds_a_planted_wrong_result_and_the_only_good",
    "tests/test_confidence.py::test_intervals_p_good_and_dict",
    "tests/test_confidence.py::test_progress_callback",
    "tests/test_confidence.py::test_warm_refits_find_the_optimum_like_full_refits",
    "tests/test_estimate.py::test_estimated_rows_are_never_training_data",
    "tests/test_estimate.py::test_read_structures_bad_line",
    "tests/test_fair_share.py::test_a_heavy_address_runs_at_low_priority_and_the_others_do_not",
    "tests/test_fuzz.py::test_any_table_reads_or_says_why_and_fits_or_says_why",
    "tests/test_fuzz.py::test_fit_is_finite_and_never_worse_than_the_centroid",
    "tests/test_graded.py::test_beats_classic_on_noisy_panels_small",
    "tests/test_honest_uncertainty.py::test_beyond_the_tested_region_the_interval_reaches_out_and_a_warning_says_where",
    "tests/test_honest_uncertainty.py::test_model_comparison_recounts_and_the_rule",
    "tests/test_honest_uncertainty.py::test_sharp_boundaries_are_allowed_by_the_width_prior",
    "tests/test_honest_uncertainty.py::test_wide_prior_is_the_default_everywhere",
    "tests/test_mixture.py::test_blend_flags_a_blend_that_flashes_below_the_component_limit",
    "tests/test_mixture.py::test_blend_json_carries_real_mixture_facts",
    "tests/test_nexttrial.py::test_no_candidates_left",
    "tests/test_nexttrial.py::test_suggest_next_end_to_end",
    "tests/test_posterior.py::test_suggest_next_posterior_engine",
    "tests/test_recommendations.py::test_aliases_against_cas_numbers_in_chemicals",
    "tests/test_recommendations.py::test_listing_cas_numbers_against_chemicals",
    "tests/test_security.py::test_share_page_escapes_user_names_notes_and_title",
    "tests/test_tables_out.py::test_a_material_that_cannot_be_fitted_does_not_stop_the_others",
    "tests/test_tables_out.py::test_fit_many_materials_json_text_and_table",
    "tests/test_tables_out.py::test_fit_many_saves_a_folder_of_projects",
    "tests/test_tables_out.py::test_fit_materials_same_with_one_or_two_processes",
    "tests/test_tables_out.py::test_fit_writes_the_per_trial_table",
    "tests/test_tables_out.py::test_jobs_reaches_the_bootstrap",
    "tests/test_tables_out.py::test_other_commands_write_tables",
    "tests/test_tables_out.py::test_rank_blend_next_need_a_material_when_there_are_several",
    "tests/test_triples.py::test_inside_area_of_the_allowed_region_against_monte_carlo",
    "tests/test_twosphere.py::test_cross_validation_folds_see_no_held_back_result",
    "tests/test_twosphere.py::test_two_regions_are_found",
    "tests/test_uncertainty_limits.py::test_converged_chain_says_so_and_limits_are_checked",
    "tests/test_uncertainty_limits.py::test_fit_cli_shows_the_comparison_by_default_and_skips_it_on_request",
    "tests/test_uncertainty_limits.py::test_fit_project_carries_the_comparison_and_round_trips",
    "tests/test_uncertainty_limits.py::test_time_limit_stops_the_chain_and_says_how_far_it_got",
    "tests/test_workbooks.py::test_random_damage_never_crashes",
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
