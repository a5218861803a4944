"""The ``solsphere`` command: the option parser and the error handling.

The subcommands themselves (parse the options, call a workflow, print) are in
:mod:`solsphere.commands`, imported when a subcommand runs, so that ``--help`` and option
errors answer at once (the science imports scipy, which takes seconds on a busy machine).
Every subcommand prints a human table by default and one JSON object with ``--json``.
Exit codes: 0 success, 2 bad input or usage, 1 internal error (a bug).
"""

from __future__ import annotations

import argparse
import functools
import json
import os
import sys
import traceback
from pathlib import Path

from solsphere import __version__, limits
from solsphere.errors import FitError, InputError, SolsphereError, numeric_notes

#: The choices of --pool and --rank-by (kept equal to solsphere.library.pools.POOLS and
#: solsphere.workflows.RANK_CHOICES by a test; the parser must not import them, see main).
POOLS = ("working", "all", "common", "liquids")
RANK_CHOICES = ("hazard", "cost", "drying", "evaporation", "red")

EPILOG = ("Predictions are guides, not guarantees: confirm at the bench. Solvents are "
          "flammable and toxic: read each safety data sheet and work with ventilation and "
          "protection; local regulations and licensed practice take precedence.")


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors (exit 2) naming the fix."""

    def error(self, message):  # noqa: D401 - argparse API
        self.exit(2, f"solsphere: error: <command line>: {message}. "
                     f"Fix: see '{self.prog} --help'.\n")


def _whole(text: str, minimum: int) -> int:
    try:
        v = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, found {text!r}") from None
    if v < minimum:
        raise argparse.ArgumentTypeError(f"expected a number ≥ {minimum}, found {v}")
    return v


def _positive_int(text: str) -> int:
    return _whole(text, 1)


def _count(text: str) -> int:
    """A whole number >= 0 (e.g. --pairs 0 lists no pairs)."""
    return _whole(text, 0)


def _at_most(maximum: int, what: str):
    """An option type: a whole number from 1 to ``maximum`` ``what``."""
    def parse(text: str) -> int:
        v = _positive_int(text)
        if v > maximum:
            raise argparse.ArgumentTypeError(f"expected at most {maximum} {what}, found {v}")
        return v
    return parse


_port = _at_most(65535, "(a port number)")
#: --workers: about one per core is enough.
_workers = _at_most(64, "worker processes")
#: --max-jobs: each job is a process.
_jobs = _at_most(256, "background jobs")


def _number(text: str) -> float:
    try:
        v = float(text.replace(",", "."))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, found {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"expected a finite number, found {text!r}")
    return v


def _temperature_arg(text: str) -> float:
    """--temperature: a number of °C within the physical range of solsphere.limits."""
    try:
        return limits.check_temperature(_number(text))
    except InputError as exc:
        raise argparse.ArgumentTypeError(exc.message.rstrip(".")) from None


def _add_limits(p):
    """The limits of solsphere.limits, one option each (see that module's table)."""
    g = p.add_argument_group("limits (raise them for big jobs; see 'solsphere.limits')")
    for name, (option, counts) in limits.OPTIONS.items():
        g.add_argument(option, type=_positive_int, metavar="N", default=None,
                       dest=f"limit_{name}",
                       help=f"most {counts} (default {getattr(limits.current(), name):,})")


def _limits_of(args) -> dict:
    """The --max-* options given (None: the limit stays as it is)."""
    return {name: getattr(args, f"limit_{name}", None) for name in limits.OPTIONS}


def _add_input(p, what="a bench results file (CSV/TSV, .xlsx, .ods; '-' reads standard "
                        "input) or a project file (.json)",
               optional: bool = False):
    _add_limits(p)
    p.add_argument("file", metavar="FILE", help=what, nargs="?" if optional else None)
    _add_reading(p)
    p.add_argument("--partial", choices=("good", "bad", "skip"), default=None,
                   help="count 'partly' results as good, bad, or leave them out "
                        "(default: good, or the project's setting)")
    p.add_argument("--method", choices=("classic", "graded"), default="classic",
                   help="classic desirability fit (default) or a graded, probabilistic "
                        "boundary with a fitted width")
    p.add_argument("--seed", type=_count, default=0, help="random seed (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


SCALES = ("auto", "words", "hansen", "lab3", "hansen:G/P")


def _scale(text: str) -> str:
    """--scale: auto, words, hansen, lab3 or hansen:G/P (checked fully when reading)."""
    t = text.strip().lower()
    if t in SCALES[:4] or t.startswith("hansen:"):
        return t
    raise argparse.ArgumentTypeError(f"expected one of {', '.join(SCALES)}, found {text!r}")


def _add_reading(p):
    """How a results file is read: the workbook's sheet, the outcome scale, a material."""
    p.add_argument("--sheet", metavar="NAME", default=None,
                   help="the workbook sheet to read (default: the first)")
    p.add_argument("--scale", type=_scale, default=None, metavar="SCALE",
                   help="how numbered outcomes read: 'hansen' = Hansen's 1-6 scale, 1-2 "
                        "dissolves, 3-4 partly, 5-6 does not (the default when scores "
                        "4-6 appear); 'hansen:G/P' another cut (up to G dissolves, up to P "
                        "partly); 'lab3' = 1 dissolves, 2 partly, 3 does not; 'words' = "
                        "only 1 / 0")
    p.add_argument("--material", metavar="NAME", default=None,
                   help="with a 'material' column: the material to use "
                        "('fit' without it fits them all)")


def _add_table_output(p):
    p.add_argument("-o", "--output", metavar="TABLE", default=None,
                   help="also write the table to TABLE.csv, TABLE.xlsx or TABLE.json "
                        "(atomic; never over an input file)")


def _jobs(text: str) -> int:
    return _at_most(256, "processes")(text)


def _add_jobs(p):
    p.add_argument("--jobs", type=_jobs, metavar="N", default=None,
                   help="worker processes for the fits of many materials and the "
                        "bootstrap (default: the machine's cores)")


def _resamples(text: str) -> int:
    """--bootstrap: a whole number of at least 2 (one resample gives no interval)."""
    return _whole(text, 2)


def _add_posterior_time(p):
    p.add_argument("--posterior-seconds", type=_positive_int, metavar="S", default=60,
                   help="time limit of the posterior sampling (default 60 s); when it stops "
                        "first the report says so and gives the effective samples reached")


def _add_bootstrap(p, what: str):
    p.add_argument("--bootstrap", type=_resamples, metavar="N", default=None,
                   help=f"resample the trials N times (e.g. 1000) and {what}")


def _add_pool(p, pool: str = "working"):
    p.add_argument("--candidates", metavar="SHELF",
                   help="CSV of the solvents you have (column 'solvent', optional dD,dP,dH); "
                        "overrides --pool")
    p.add_argument("--pool", choices=POOLS, default=pool,
                   help="candidates without a shelf: 'working' = our curated list of about "
                        "170 solvents in use in industry and the lab (no reagents; "
                        "data/working_solvents.csv); 'all' = every liquid in the library "
                        "(reagents included). 'common' and 'liquids' are the older names. "
                        f"Default: {pool}")
    p.add_argument("--top", type=_positive_int, default=20, help="how many to list (default 20)")
    p.add_argument("--exclude", action="append", default=[], metavar="NAMES",
                   help="leave these solvents out (comma-separated; repeatable)")
    p.add_argument("--min-flash-point", type=_number, metavar="°C",
                   help="only solvents with a known flash point at or above this")
    p.add_argument("--max-boiling-point", type=_number, metavar="°C",
                   help="only solvents boiling at or below this")
    p.add_argument("--no-carcinogens", action="store_true",
                   help="leave out solvents with a carcinogen classification")
    p.add_argument("--min-boiling-point", type=_number, metavar="°C",
                   help="only solvents boiling at or above this (slow-drying limit)")
    p.add_argument("--min-exposure-limit", type=_number, metavar="PPM",
                   help="leave out solvents whose 8-h exposure limit (TWA) is below this")
    p.add_argument("--restricted", metavar="FILE",
                   help="CSV listing restricted solvents (column 'solvent'), all left out; "
                        "see data/restricted_example.csv")
    p.add_argument("--temperature", type=_temperature_arg, metavar="°C",
                   help="shift the candidates' coordinates to this process temperature "
                        "(Hansen–Beerbower relations); the sphere stays as fitted")


def _add_blend_options(p, drying: str = "with --drying: "):
    """The blend design options of ``blend`` and ``share`` (one definition)."""
    p.add_argument("--components", type=int, choices=(2, 3), default=2,
                   help="two- or three-solvent blends (default 2)")
    p.add_argument("--max-fraction", action="append", default=[], metavar="NAME=F",
                   help="upper volume-fraction limit for a solvent in 3-component blends, "
                        "e.g. toluene=0.3 or toluene=30%% (repeatable)")
    p.add_argument("--min-fraction", action="append", default=[], metavar="NAME=F",
                   help="lower volume-fraction limit (repeatable)")
    p.add_argument("--rank-by", choices=RANK_CHOICES, default="hazard",
                   help="the priority after feasibility (inside, one phase) and robustness "
                        "(window width): hazard (default; safer first), cost (needs shelf "
                        f"prices), drying ({drying}stays inside longest), evaporation "
                        "(faster first); 'red' = the plain RED order of earlier versions")
    p.add_argument("--all-combinations", action="store_true",
                   help="list the top blends even when a solvent repeats (by default no "
                        "solvent is in more than two of them)")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="solsphere", epilog=EPILOG,
                     description="Hansen solubility spheres from bench results: fit, rank "
                                 "untried solvents, design blends, share an interactive map.")
    parser.add_argument("--version", action="version", version=_version())
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("fit", help="fit the sphere to bench results (one per material)",
                       epilog=EPILOG)
    _add_input(p, optional=True)  # none with --demo
    p.add_argument("--demo", action="store_true",
                   help="fit the packaged demo results (invented data; works wherever "
                        "solsphere is installed)")
    _add_table_output(p)
    _add_jobs(p)
    p.add_argument("--save", metavar="PROJECT.json",
                   help="save trials, settings and fit (atomic); with several materials, "
                        "a folder that gets one project per material")
    _add_bootstrap(p, "report 95 %% intervals of the centre and R0")
    p.add_argument("--posterior", type=_positive_int, metavar="N", default=None,
                   help="sample N plausible spheres (e.g. 2000) from the graded model's "
                        "posterior and report their 95 %% credible intervals")
    _add_posterior_time(p)
    p.add_argument("--spheres", type=int, choices=(1, 2), default=1,
                   help="2: also try two spheres (good if inside either) and say whether "
                        "the second earns its keep")
    p.add_argument("--no-influence", action="store_true",
                   help="skip the leave-one-out list of results to re-check first")
    p.add_argument("--no-compare", action="store_true",
                   help="skip the comparison of the classic and graded fits and the 'partly' "
                        "readings on held-back results (shown by default)")
    p.add_argument("--compare", action="store_true", help=argparse.SUPPRESS)  # the default now

    p = sub.add_parser("rank", help="untried solvents sorted by RED", epilog=EPILOG)
    _add_input(p)
    _add_pool(p)
    _add_table_output(p)
    _add_jobs(p)
    p.add_argument("--include-tested", action="store_true", help="keep tested solvents in the list")
    _add_bootstrap(p, "give each solvent's probability of dissolving the material (p_good)")
    p.add_argument("--posterior", type=_positive_int, metavar="N", default=None,
                   help="take p_good from N spheres sampled from the graded model's "
                        "posterior instead (e.g. 2000)")
    _add_posterior_time(p)

    p = sub.add_parser("next", help="which solvents to test next to pin the sphere down",
                       epilog=EPILOG)
    _add_input(p, optional=True)  # no file with --smiles
    _add_pool(p)  # a test campaign uses solvents on a shelf, not reagents
    _add_table_output(p)
    _add_jobs(p)
    p.add_argument("--n", type=_positive_int, default=None,
                   help="how many to suggest (default 5; 16 with --smiles)")
    p.add_argument("--smiles", metavar="SMILES", default=None,
                   help="no results yet: plan the first trials from the material's "
                        "structure (estimated centre ± its uncertainty, broad R0 prior; "
                        "needs solsphere[structure])")
    p.add_argument("--samples", type=_positive_int, metavar="N", default=1000,
                   help="plausible spheres sampled from the posterior to score the "
                        "candidates (default 1000)")
    _add_bootstrap(p, "score the candidates by the disagreement among the resampled "
                      "spheres instead of the posterior samples")

    p = sub.add_parser("estimate", help="dD, dP, dH, dT and molar volume estimated from "
                                        "structures (SMILES), with 95 %% intervals",
                       epilog=EPILOG)
    p.add_argument("smiles", metavar="SMILES", nargs="*", help="SMILES strings")
    p.add_argument("--from", dest="source", metavar="FILE",
                   help="a file with one SMILES or compound name a line")
    p.add_argument("--json", action="store_true", help="print one JSON object")

    p = sub.add_parser("blend", help="two-solvent blends that land inside the sphere", epilog=EPILOG)
    _add_input(p)
    _add_pool(p)
    _add_table_output(p)
    p.add_argument("--with-single", action="store_true",
                   help="also list pairs whose best mix is one solvent alone")
    p.add_argument("--drying", action="store_true",
                   help="simulate evaporation (activity coefficients, evaporative cooling) "
                        "and report when the drying liquid leaves the sphere")
    _add_blend_options(p)

    p = sub.add_parser("mixture", help="flash point, vapour pressure, phases and drying path "
                       "of one blend (activity coefficients)", epilog=EPILOG)
    p.add_argument("spec", metavar="SPEC",
                   help="the blend as in a bench file, volume parts: \"ethanol 10 + water 90\" "
                        "(one solvent alone is a mixture of one)")
    p.add_argument("--material", metavar="PROJECT",
                   help="results or project file: say when the drying liquid leaves its sphere")
    p.add_argument("--temperature", type=_number, default=25.0, metavar="°C",
                   help="temperature of the liquid and the air (default 25)")
    p.add_argument("--humidity", type=_number, default=0.0, metavar="%",
                   help="relative humidity of the air for the drying path, 0-100 (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object")

    p = sub.add_parser("replace", help="solvents and pairs that can replace a given solvent",
                       epilog=EPILOG)
    p.add_argument("name", metavar="NAME", help="the solvent to replace (name, CAS or abbreviation)")
    p.add_argument("--for-material", metavar="FILE",
                   help="results or project file: rank by behaviour towards that material")
    p.add_argument("--partial", choices=("good", "bad", "skip"), default=None,
                   help="with --for-material: how to count 'partly' results")
    _add_reading(p)  # --sheet, --scale, --material for the --for-material file
    p.add_argument("--pairs", type=_count, default=5, metavar="N", help="pairs to list (default 5)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--allow-worse", action="store_true",
                   help="also offer candidates that are worse than the solvent replaced on "
                        "carcinogen class, reprotoxic/regulatory listing, corrosivity / "
                        "acute toxicity or flammability, or that are listed themselves")
    _add_pool(p)
    _add_table_output(p)
    _add_limits(p)

    p = sub.add_parser("share", help="write a report page (one self-contained HTML file with "
                                     "the 3D map) or the map as PNG, SVG or PDF", epilog=EPILOG)
    _add_input(p)
    p.add_argument("-o", "--output", required=True, action="append", metavar="OUT",
                   help="where to write: OUT.html the report page (opens offline, prints to "
                        "a clean A4 page); OUT.png, OUT.svg or OUT.pdf a figure (needs "
                        "Chromium). Repeatable: every image is drawn by one browser")
    p.add_argument("--title", default=None, help="page title (default: 'Solubility report' "
                                                 "and the material's name)")
    p.add_argument("--material-name", metavar="NAME", default=None,
                   help="the material's name, shown on the page")
    p.add_argument("--notes", metavar="TEXT", default=None,
                   help="notes shown under the title (e.g. how the results were judged)")
    _add_pool(p)
    p.add_argument("--blends", type=_count, default=5, metavar="N",
                   help="blends to list (default 5; 0 for none)")
    _add_blend_options(p, drying="")
    p.add_argument("--replace", metavar="NAME", default=None,
                   help="also list replacements for this solvent from the same candidates")
    p.add_argument("--pairs", type=_count, default=5, metavar="N",
                   help="with --replace: pairs to list (default 5)")
    p.add_argument("--allow-worse", action="store_true",
                   help="with --replace: also offer candidates worse than the solvent "
                        "replaced on a hazard")
    _add_bootstrap(p, "show 95 %% intervals of the centre and R0 and each solvent's p_good")
    p.add_argument("--figure", choices=("map", "planes", "ladder"), default="map",
                   help="the figure written to .png/.svg/.pdf outputs: 'map' the 3D map "
                        "(default), 'planes' the three 2D planes, 'ladder' the RED ladder")
    p.add_argument("--width", type=_at_most(6000, "pixels"), default=None, metavar="PX",
                   help="image width in CSS pixels (default 1000; PNG drawn at twice this)")
    p.add_argument("--height", type=_at_most(6000, "pixels"), default=None, metavar="PX",
                   help="image height in CSS pixels (default 750)")

    p = sub.add_parser("app", help="serve the interactive app in the browser", epilog=EPILOG)
    p.add_argument("file", metavar="FILE", nargs="?", help="project or results file to open")
    p.add_argument("--host", default="127.0.0.1", help="address to bind (default 127.0.0.1)")
    p.add_argument("--port", type=_port, default=8050, help="port (default 8050)")
    p.add_argument("--workers", type=_workers, default=1, metavar="N",
                   help="worker processes (default 1); for a shared lab server use about "
                        "one per core, e.g. 2 (needs gunicorn, Unix only)")
    p.add_argument("--max-jobs", type=_jobs, default=None, metavar="N",
                   help="long computations (bootstrap, posterior, next trials, blend "
                        "screens) running at once, all users together (default: two per "
                        "core, at least 4); one more is refused with a message to try again")
    _add_limits(p)
    return parser


def _version() -> str:
    return f"solsphere {__version__}"


# ---------------------------------------------------------------- shared steps

#: Each workflow setting an error can be about, with the option that sets it and a hint.
SETTING_OPTIONS = {
    "output": ("-o", None),
    "width": ("--width", "give a width from 50 to 6000 px"),
    "height": ("--height", "give a height from 50 to 6000 px"),
    "drying": ("--rank-by", "add --drying"),
    "rank_by": ("--rank-by", "give --candidates SHELF with columns solvent,price"),
    "max_fraction": ("--max-fraction", "write e.g. --max-fraction toluene=0.3 or toluene=30%"),
    "min_fraction": ("--min-fraction", "write e.g. --min-fraction toluene=0.1"),
    "exclude": ("--exclude", None),
    "filters": (None, "relax --min-flash-point / --max-boiling-point / --min-boiling-point / "
                      "--min-exposure-limit / --exclude / --restricted, or add solvents to "
                      "the shelf (or use --pool all)"),
}


def located(exc: InputError) -> InputError:
    """A workflow's neutral error in the command line's words (its option and hint)."""
    if exc.setting in SETTING_OPTIONS and exc.file is None:
        option, hint = SETTING_OPTIONS[exc.setting]
        return exc.located(file="<command line>", column=option, hint=hint)
    if exc.setting == "filters":
        return exc.located(hint=SETTING_OPTIONS["filters"][1])
    return exc


@functools.lru_cache(maxsize=1)
def _parser() -> argparse.ArgumentParser:
    """The parser :func:`main` uses, built once per process (building it takes about
    25 ms; a program or a test calling :func:`main` many times pays it once)."""
    return build_parser()


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    try:
        # deferred: the subcommands import the science (numpy, scipy: seconds to load)
        from solsphere.commands import COMMANDS

        with limits.limited(**_limits_of(args)):  # for this command only
            if args.command == "app":  # a server: its requests answer for themselves
                return COMMANDS[args.command](args)
            with numeric_notes() as notes:
                code = COMMANDS[args.command](args)
        for note in notes:  # after the report, one line each, never a numpy trace
            print(f"solsphere: note: {note}", file=sys.stderr)
        return code
    except SolsphereError as exc:
        if isinstance(exc, InputError):
            exc = located(exc)
        text = str(exc)
        where = (getattr(args, "file", None) or getattr(args, "for_material", None)
                 or getattr(args, "material", None))
        if isinstance(exc, FitError) and where and where not in text:
            text = f"{where}: {text}"  # name the file whose results cannot be fitted
        print(f"solsphere: error: {text}", file=sys.stderr)
        for more in (getattr(exc, "problems", None) or [])[1:]:  # every problem of a file
            print(f"solsphere: error: {more}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("solsphere: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as exc:  # a bug: say so in one line, keep the trace for developers
        if os.environ.get("SOLSPHERE_DEBUG"):
            traceback.print_exc()
        print(f"solsphere: internal error (a bug, please report it): {type(exc).__name__}: {exc}. "
              f"Set SOLSPHERE_DEBUG=1 to see the trace.", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
