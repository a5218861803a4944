"""The ``solsphere`` command: a thin layer over the library.

Every subcommand prints a human table by default and one JSON object with ``--json``.
Exit codes: 0 success, 2 bad input or usage, 1 internal error (a bug).
Heavy imports (plotly, dash, scipy) happen inside the subcommands so ``--help`` is instant.
"""

from __future__ import annotations

import argparse
import json
import sys

from solsphere import limits
from solsphere.errors import FitError, InputError, SolsphereError, numeric_notes

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


def _port(text: str) -> int:
    v = _positive_int(text)
    if v > 65535:
        raise argparse.ArgumentTypeError(f"expected a port from 1 to 65535, found {v}")
    return v


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


def _add_input(p, what="a bench results file (CSV/TSV) or a project file (.json)"):
    _add_limits(p)
    p.add_argument("file", metavar="FILE", help=what)
    p.add_argument("--partial", choices=("good", "bad", "skip"), default=None,
                   help="count 'partly' results as good, bad, or leave them out "
                        "(default: good, or the project's setting)")
    p.add_argument("--method", choices=("classic", "graded"), default="classic",
                   help="classic desirability fit (default) or a graded, probabilistic "
                        "boundary with a fitted width")
    p.add_argument("--seed", type=_count, default=0, help="random seed (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _add_bootstrap(p, what: str):
    p.add_argument("--bootstrap", type=_positive_int, metavar="N", default=None,
                   help=f"resample the trials N times (e.g. 1000) and {what}")


def _add_pool(p, pool: str = "liquids"):
    p.add_argument("--candidates", metavar="SHELF",
                   help="CSV of the solvents you have (column 'solvent', optional dD,dP,dH); "
                        "overrides --pool")
    p.add_argument("--pool", choices=("common", "liquids"), default=pool,
                   help="candidates without a shelf: 'common' = our curated list of about "
                        "150 solvents in common industrial and lab use (no reagents; "
                        "data/common_solvents.csv); 'liquids' = every liquid in the library "
                        f"(reagents included). Default: {pool}")
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


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="solsphere", epilog=EPILOG,
                     description="Hansen solubility spheres from bench results: fit, rank "
                                 "untried solvents, design blends, share an interactive map.")
    parser.add_argument("--version", action="version", version=_version())
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("fit", help="fit the sphere to bench results", epilog=EPILOG)
    _add_input(p)
    p.add_argument("--save", metavar="PROJECT.json", help="save trials, settings and fit (atomic)")
    _add_bootstrap(p, "report 95 %% intervals of the centre and R0")
    p.add_argument("--posterior", type=_positive_int, metavar="N", default=None,
                   help="sample N plausible spheres (e.g. 2000) from the graded model's "
                        "posterior and report their 95 %% credible intervals")
    p.add_argument("--spheres", type=int, choices=(1, 2), default=1,
                   help="2: also try two spheres (good if inside either) and say whether "
                        "the second earns its keep")
    p.add_argument("--no-influence", action="store_true",
                   help="skip the leave-one-out list of results to re-check first")

    p = sub.add_parser("rank", help="untried solvents sorted by RED", epilog=EPILOG)
    _add_input(p)
    _add_pool(p)
    p.add_argument("--include-tested", action="store_true", help="keep tested solvents in the list")
    _add_bootstrap(p, "give each solvent's probability of dissolving the material (p_good)")
    p.add_argument("--posterior", type=_positive_int, metavar="N", default=None,
                   help="take p_good from N spheres sampled from the graded model's "
                        "posterior instead (e.g. 2000)")

    p = sub.add_parser("next", help="which solvents to test next to pin the sphere down",
                       epilog=EPILOG)
    _add_input(p)
    _add_pool(p, pool="common")  # a test campaign uses solvents on a shelf, not reagents
    p.add_argument("--n", type=_positive_int, default=5, help="how many to suggest (default 5)")
    p.add_argument("--samples", type=_positive_int, metavar="N", default=1000,
                   help="plausible spheres sampled from the posterior to score the "
                        "candidates (default 1000)")
    _add_bootstrap(p, "score the candidates by the disagreement among the resampled "
                      "spheres instead of the posterior samples")

    p = sub.add_parser("blend", help="two-solvent blends that land inside the sphere", epilog=EPILOG)
    _add_input(p)
    _add_pool(p)
    p.add_argument("--with-single", action="store_true",
                   help="also list pairs whose best mix is one solvent alone")
    p.add_argument("--components", type=int, choices=(2, 3), default=2,
                   help="two- or three-solvent blends (default 2)")
    p.add_argument("--max-fraction", action="append", default=[], metavar="NAME=F",
                   help="upper volume-fraction limit for a solvent in 3-component blends, "
                        "e.g. toluene=0.3 (repeatable)")
    p.add_argument("--min-fraction", action="append", default=[], metavar="NAME=F",
                   help="lower volume-fraction limit (repeatable)")
    p.add_argument("--drying", action="store_true",
                   help="simulate evaporation (Raoult's law) and report when the drying "
                        "liquid leaves the sphere")
    p.add_argument("--rank-by", choices=("red", "drying", "cost"), default="red",
                   help="order: RED (default); drying (with --drying: longest inside "
                        "first); cost (inside blends, cheapest first; needs shelf prices)")

    p = sub.add_parser("replace", help="solvents and pairs that can replace a given solvent",
                       epilog=EPILOG)
    p.add_argument("name", metavar="NAME", help="the solvent to replace (name, CAS or abbreviation)")
    p.add_argument("--for-material", metavar="FILE",
                   help="results or project file: rank by behaviour towards that material")
    p.add_argument("--partial", choices=("good", "bad", "skip"), default=None,
                   help="with --for-material: how to count 'partly' results")
    p.add_argument("--pairs", type=_count, default=5, metavar="N", help="pairs to list (default 5)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _add_pool(p)
    _add_limits(p)

    p = sub.add_parser("share", help="write one self-contained HTML file with the 3D map", epilog=EPILOG)
    _add_input(p)
    p.add_argument("-o", "--output", required=True, metavar="OUT.html", help="where to write it")
    p.add_argument("--title", default=None, help="page title")

    p = sub.add_parser("app", help="serve the interactive app in the browser", epilog=EPILOG)
    p.add_argument("file", metavar="FILE", nargs="?", help="project or results file to open")
    p.add_argument("--host", default="127.0.0.1", help="address to bind (default 127.0.0.1)")
    p.add_argument("--port", type=_port, default=8050, help="port (default 8050)")
    p.add_argument("--workers", type=_workers, default=1, metavar="N",
                   help="worker processes (default 1); for a shared lab server use about "
                        "one per core, e.g. 2 (needs gunicorn, Unix only)")
    _add_limits(p)
    return parser


def _version() -> str:
    from solsphere import __version__
    return f"solsphere {__version__}"


# ---------------------------------------------------------------- shared steps

def load_session(args):
    """Read FILE (results or project) and return (project, fit dict, library)."""
    from solsphere.library.table import load_library
    from solsphere.io.project import load_any
    from solsphere.workflows import fit_project
    lib = load_library()
    project = load_any(args.file, library=lib)
    fit = fit_project(project, partial=args.partial, library=lib, seed=args.seed,
                      method=args.method)
    # problems that did not stop reading (repeated rows, ignored columns, saved
    # coordinates used ...) are reported with the fit, not dropped
    fit.warnings[:0] = [w for w in project.trials.warnings if w not in fit.warnings]
    return project, fit, lib


def candidate_pool(args, lib, project, *, limits: bool = True):
    """The pool per the options; ``limits=False`` leaves the flash/boiling point filters
    to the caller (the blend screen applies them itself and counts what they remove)."""
    from solsphere.errors import UnknownSolventError
    from solsphere.workflows import candidate_pool as pool
    from solsphere.workflows import at_temperature
    try:
        solvents, filters = pool(lib, shelf=args.candidates, exclude=_split(args.exclude),
                                 min_flash_point=args.min_flash_point if limits else None,
                                 max_boiling_point=args.max_boiling_point if limits else None,
                                 exclude_carcinogens=args.no_carcinogens,
                                 min_boiling_point=args.min_boiling_point,
                                 min_exposure_limit=args.min_exposure_limit,
                                 restricted=args.restricted, pool=args.pool)
    except UnknownSolventError as exc:
        if exc.file is None:  # a name given to --exclude
            exc.file, exc.column = "<command line>", "--exclude"
            exc.args = (str(exc),)
        raise
    solvents, notes = at_temperature(solvents, args.temperature)
    if notes:
        filters["temperature"] = args.temperature
        filters["temperature_notes"] = notes
    return solvents, filters


def _limits(values, lib, option: str) -> dict[str, float]:
    """Parse NAME=F fraction limits (names resolved through the library)."""
    out = {}
    for v in values or []:
        name, sep, frac = v.rpartition("=")
        try:
            f = float(frac.replace(",", "."))
        except ValueError:
            f = None
        if not sep or not name.strip() or f is None or not 0.0 <= f <= 1.0:
            raise InputError(f"{option} {v!r} is not NAME=F with F between 0 and 1.",
                             file="<command line>", column=option,
                             hint=f"write e.g. {option} toluene=0.3")
        out[lib.lookup(name.strip()).name] = f
    return out


def _split(values) -> list[str]:
    out = []
    for v in values or []:
        out += [x.strip() for x in v.split(",") if x.strip()]
    return out


def _emit(args, obj, text: str):
    if args.json:
        print(json.dumps(obj, ensure_ascii=False, allow_nan=False))
    else:
        print(text)


# ---------------------------------------------------------------- subcommands

def _progress(args, label: str):
    """A progress bar on the terminal (none under --json or when not a terminal)."""
    if args.json or not sys.stderr.isatty():
        return None

    def show(done: int, total: int) -> None:
        width = 30
        k = int(width * done / max(total, 1))
        sys.stderr.write(f"\r{label} [{'#' * k}{'.' * (width - k)}] {done}/{total}")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()
    return show


def _bootstrap(args, project, fit, n: int):
    from solsphere.uncertainty.bootstrap import bootstrap
    return bootstrap(project.trials, n_bootstrap=n, seed=args.seed, method=args.method,
                     partial=fit.partial, bounds=fit.bounds,
                     progress=_progress(args, "resampling"))


def _posterior(args, project, fit, n: int):
    from solsphere.uncertainty.posterior import sample_posterior
    return sample_posterior(project.trials, n_samples=n, seed=args.seed,
                            partial=fit.partial if fit.partial != "ordinal" else "good",
                            bounds=fit.bounds)


def cmd_fit(args) -> int:
    if args.save:  # say so before the fit, and never open a pipe or device
        from solsphere.io.files import check_output
        check_output(args.save, inputs=[args.file])
    project, fit, lib = load_session(args)
    obj, text = fit.to_dict(), str(fit)
    if args.bootstrap:
        boot = _bootstrap(args, project, fit, args.bootstrap)
        obj["intervals"] = boot.intervals
        obj["n_bootstrap"] = boot.n_bootstrap
        obj["bootstrap"] = boot.to_dict()
        text += "\n" + str(boot)
    if args.posterior:
        post = _posterior(args, project, fit, args.posterior)
        obj["posterior"] = post.to_dict()
        text += "\n" + str(post)
    n_trials = len(project.trials)
    if not args.no_influence and n_trials * n_trials > limits.current().resample_work:
        obj["influence"] = None
        text += (f"\n[[Re-check first]] not computed: {n_trials} results need {n_trials:,}"
                 f" leave-one-out refits, above the limit of resample work (raise it with "
                 f"--max-resample-work N, or add --no-influence)")
    elif not args.no_influence:
        from solsphere.uncertainty.bootstrap import influence
        # leave-one-out refits rank the list; the flipped-result refits (the app shows
        # them) would double the time of every fit
        inf = influence(project.trials, partial=fit.partial, bounds=fit.bounds, flips=False)
        rows = inf.to_dict()["influence"]
        obj["influence"] = rows
        text += "\n[[Re-check first]] (results whose removal moves the sphere most)\n" + "\n".join(
            f"    {r['name']}: centre moves {r['shift']:.1f} MPa½, R0 {r['dR0']:+.1f}"
            if r["shift"] is not None else f"    {r['name']}: {r['note']}"
            for r in rows[:5])
    if args.spheres == 2:
        from solsphere.models.twosphere import fit_two_spheres
        two = fit_two_spheres(project.trials, partial=fit.partial if fit.partial != "ordinal"
                              else "good", seed=args.seed)
        obj["two_spheres"] = two.to_dict()
        text += "\n" + str(two)
    if args.save:
        from solsphere.io.project import save
        project.fit = fit.to_dict()
        project.settings["partial"] = fit.partial
        project.settings["method"] = args.method
        save(project, args.save)
        if not args.json:
            text += f"\nProject saved to {args.save}"
    _emit(args, obj, text)
    return 0


def cmd_rank(args) -> int:
    from solsphere.design.ranking import rank_solvents
    project, fit, lib = load_session(args)
    pool, filters = candidate_pool(args, lib, project)
    tested = set(project.trials.names) | {t.cas for t in project.trials if t.cas}
    boot = _bootstrap(args, project, fit, args.bootstrap) if args.bootstrap else None
    if args.posterior:
        boot = _posterior(args, project, fit, args.posterior)
    ranking = rank_solvents(pool, (fit.dD, fit.dP, fit.dH), fit.R0, top=args.top, tested=tested,
                            include_tested=args.include_tested, filters=filters,
                            temperature_C=_temperature(args), bootstrap=boot)
    _emit(args, ranking.to_dict(), str(ranking) + "\n" + _pool_line(filters))
    return 0


def cmd_next(args) -> int:
    from solsphere.uncertainty.nexttrials import suggest_next
    project, fit, lib = load_session(args)
    pool, filters = candidate_pool(args, lib, project)
    boot = _bootstrap(args, project, fit, args.bootstrap) if args.bootstrap else None
    sugg = suggest_next(project.trials, candidates=pool, n=args.n, bootstrap=boot,
                        n_samples=args.samples, seed=args.seed,
                        partial=fit.partial if fit.partial != "ordinal" else "good",
                        progress=_progress(args, "resampling"))
    obj = dict(sugg.to_dict(), filters=filters)
    _emit(args, obj, str(sugg) + "\n" + _pool_line(filters))
    return 0


def _pool_line(filters: dict) -> str:
    """Which candidates were used, for the human output."""
    other = {"common solvents": " (--pool liquids: every library liquid)",
             "library liquids": " (--pool common: the curated common solvents)"}
    return f"Candidates: {filters['pool']}{other.get(filters['pool'], '')}."


def _temperature(args) -> float:
    return 25.0 if args.temperature is None else args.temperature


def cmd_blend(args) -> int:
    from solsphere.workflows import add_safety_and_drying, blend_notes
    if args.rank_by == "drying" and not args.drying:  # say so before the long screen
        raise InputError("ranking by drying needs the drying simulation.",
                         file="<command line>", hint="add --drying")
    project, fit, lib = load_session(args)
    pool, filters = candidate_pool(args, lib, project)  # says so when nothing is left
    if args.min_flash_point is not None or args.max_boiling_point is not None:
        # the screen applies the same limits (known and within) and records what each
        # one removed, so its report counts them truthfully
        pool, _ = candidate_pool(args, lib, project, limits=False)
    centre = (fit.dD, fit.dP, fit.dH)
    if args.rank_by == "cost" and not any(s.price is not None for s in pool):
        raise InputError("no candidate has a price: ranking by cost needs a shelf file with "
                         "a price column.", file="<command line>", column="--rank-by",
                         hint="give --candidates SHELF with columns solvent,price")
    # ranking by cost or drying looks at every inside blend, not only the nearest
    top = None if args.rank_by != "red" else args.top
    limits = dict(min_flash_point=args.min_flash_point, max_boiling_point=args.max_boiling_point,
                  top=top, only_blends=not args.with_single)
    if args.components == 3:
        from solsphere.design.triples import screen_triples, triple_shortlist
        upper = _limits(args.max_fraction, lib, "--max-fraction")
        lower = _limits(args.min_fraction, lib, "--min-fraction")
        short = triple_shortlist(pool, centre, fit.R0, keep=set(upper) | set(lower))
        if len(short) < len(pool):
            filters["shortlist"] = (f"{len(short)} of {len(pool)} candidates: the nearest "
                                    f"and the partners of the best pairs")
        screen = screen_triples(short, centre, fit.R0, max_fraction=upper,
                                min_fraction=lower, **limits)
    else:
        if args.max_fraction or args.min_fraction:
            raise InputError("--max-fraction / --min-fraction apply to 3-component blends.",
                             file="<command line>", hint="add --components 3")
        from solsphere.design.pairs import screen_blends
        screen = screen_blends(pool, centre, fit.R0, **limits)
    screen.filters.update(filters)
    if top is None:  # keep the work bounded: the inside blends (or the nearest 500)
        inside = [b for b in screen.blends if b.red <= 1.0]
        screen.blends = (inside or screen.blends)[:max(500, args.top)]
    blends = add_safety_and_drying(screen, pool, centre, fit.R0, drying=args.drying,
                                   temperature_C=_temperature(args),
                                   rank_by=args.rank_by, top=args.top)
    _emit(args, dict(screen.to_dict(), blends=blends),
          str(screen) + blend_notes(blends, args.drying))
    return 0


def cmd_replace(args) -> int:
    from solsphere.library.table import load_library
    from solsphere.design.substitution import find_substitutes
    lib = load_library()
    target = lib.lookup(args.name)
    material = None
    if args.for_material:
        from solsphere.io.project import load_any
        from solsphere.workflows import fit_project
        fit = fit_project(load_any(args.for_material, library=lib), partial=args.partial,
                          library=lib)
        material = ((fit.dD, fit.dP, fit.dH), fit.R0)
    pool, filters = candidate_pool(args, lib, None)
    result = find_substitutes(target, pool, top=args.top, n_pairs=max(args.pairs, 0),
                              material=material)
    _emit(args, dict(result.to_dict(), filters=filters), str(result))
    return 0


def cmd_share(args) -> int:
    from solsphere.io.files import atomic_write_text
    from solsphere.io.files import check_output
    from solsphere.workflows import share_page
    check_output(args.output, inputs=[args.file])
    project, fit, lib = load_session(args)
    _check_share_target(args.output)
    page = share_page(project, fit, lib, title=args.title)
    atomic_write_text(args.output, page)
    _emit(args, {"output": args.output, "bytes": len(page.encode())},
          f"Wrote {args.output} ({len(page.encode()) / 1e6:.1f} MB, self-contained, opens offline)")
    return 0


def _check_share_target(path: str) -> None:
    """Refuse to replace an existing file that is not an HTML page (a results file or a
    project given to -o by mistake must never be lost)."""
    from pathlib import Path
    p = Path(path)
    if not p.is_file():
        return  # new file; a folder or a missing folder is reported by the writer
    try:
        with open(p, "rb") as fh:
            head = fh.read(512).lstrip(b"\xef\xbb\xbf").lstrip().lower()
    except OSError:
        return
    if not (head.startswith(b"<!doctype html") or head.startswith(b"<html")):
        raise InputError("this file exists and is not an HTML page; not overwriting it.",
                         file=path, hint="choose another name, e.g. one ending in .html")


def _workers(text: str) -> int:
    """--workers: a whole number from 1 to app.server.MAX_WORKERS (64)."""
    v = _positive_int(text)
    if v > 64:
        raise argparse.ArgumentTypeError(f"expected at most 64 worker processes, found {v}")
    return v


def cmd_app(args) -> int:
    from solsphere.app.server import serve
    serve(args.file, host=args.host, port=args.port, workers=args.workers)
    return 0


COMMANDS = {"fit": cmd_fit, "rank": cmd_rank, "blend": cmd_blend, "share": cmd_share,
            "replace": cmd_replace, "next": cmd_next, "app": cmd_app}


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    try:
        with limits.limited(**_limits_of(args)):  # for this command only
            if args.command == "app":  # a server: its requests answer for themselves
                return COMMANDS[args.command](args)
            with numeric_notes() as notes:
                code = COMMANDS[args.command](args)
        for note in notes:  # after the report, one line each, never a numpy trace
            print(f"solsphere: note: {note}", file=sys.stderr)
        return code
    except SolsphereError as exc:
        text = str(exc)
        where = getattr(args, "file", None) or getattr(args, "for_material", None)
        if isinstance(exc, FitError) and where and where not in text:
            text = f"{where}: {text}"  # name the file whose results cannot be fitted
        print(f"solsphere: error: {text}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("solsphere: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except Exception as exc:  # a bug: say so in one line, keep the trace for developers
        import os
        import traceback
        if os.environ.get("SOLSPHERE_DEBUG"):
            traceback.print_exc()
        print(f"solsphere: internal error (a bug, please report it): {type(exc).__name__}: {exc}. "
              f"Set SOLSPHERE_DEBUG=1 to see the trace.", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
