"""The ``solsphere`` subcommands: read the options, call a workflow, print the result.

Each ``cmd_*`` takes the parsed arguments of :mod:`solsphere.cli` and returns the exit
code; errors propagate to :func:`solsphere.cli.main`, which prints them on one line.
"""

from __future__ import annotations

import json
import os
import sys
from importlib.resources import files
from pathlib import Path

from solsphere.design.ranking import rank_solvents
from solsphere.errors import InputError
from solsphere.formatting import num, split_names
from solsphere import limits
from solsphere.batch import fit_materials, recheck_lines, save_materials
from solsphere.io.files import atomic_write_text, check_output
from solsphere.io.project import Project, is_project_file, load_any, save
from solsphere.io.tables import table_kind, write_table
from solsphere.io.trials import pick_material, read_materials
from solsphere.library.table import load_library
from solsphere.mixtures.mixture import analyse_mixture
from solsphere.models.twosphere import fit_two_spheres
from solsphere.report.export import image_format, write_images
from solsphere.report.share import build_share
from solsphere.uncertainty.bootstrap import bootstrap, influence
from solsphere.uncertainty.nexttrials import suggest_next
from solsphere.uncertainty.posterior import MAX_SECONDS, sample_posterior
from solsphere.workflows import (candidate_pool, design_blends, find_replacements, fit_project,
                                 resolved_names as shared_resolved_names)


def reading(args) -> dict:
    """The reading options of a results file (--sheet, --scale, --material)."""
    return dict(sheet=getattr(args, "sheet", None), scale=getattr(args, "scale", None),
                material=getattr(args, "material", None))


def load_session(args, compare: bool = False):
    """Read FILE (results or project) and return (project, fit result, library)."""
    lib = load_library()
    project = load_any(args.file, library=lib, **reading(args))
    fit = fit_project(project, partial=args.partial, library=lib, seed=args.seed,
                      method=args.method, compare=compare)
    return project, fit, lib


def pool_options(args, *, limits: bool = True) -> dict:
    """The keyword arguments of :func:`solsphere.workflows.candidate_pool` per the options."""
    return dict(shelf=args.candidates, exclude=split_names(args.exclude),
                min_flash_point=args.min_flash_point if limits else None,
                max_boiling_point=args.max_boiling_point if limits else None,
                exclude_carcinogens=args.no_carcinogens,
                min_boiling_point=args.min_boiling_point,
                min_exposure_limit=args.min_exposure_limit,
                restricted=args.restricted, pool=args.pool, temperature=args.temperature)


def _table_out(args, result, title: str, inputs=()) -> str:
    """Write ``result``'s table to -o (if given); the line that says so, or ''."""
    out = getattr(args, "output", None)
    if not out:
        return ""
    kind = write_table(result, out, inputs=[i for i in inputs if i], title=title)
    return f"Table written to {out} ({kind.upper()})"


def _check_table_target(args, inputs=()) -> None:
    """Refuse a bad -o before the work (wrong ending, a device, an input file)."""
    out = getattr(args, "output", None)
    if out:
        table_kind(out)
        check_output(out, inputs=[i for i in inputs if i])


def _emit(args, obj, text: str, note: str = ""):
    if note and not args.json:
        text += "\n" + note
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


def _binary_partial(fit) -> str:
    return fit.partial if fit.partial != "ordinal" else "good"


def _bootstrap(args, project, fit, n: int):
    return bootstrap(project.trials, n_bootstrap=n, seed=args.seed, method=args.method,
                     partial=fit.partial, bounds=fit.bounds,
                     n_jobs=getattr(args, "jobs", None),
                     progress=_progress(args, "resampling"))


def _posterior(args, project, fit, n: int):
    # the posterior's own prior (physically wide), not the classic fit's tested box
    return sample_posterior(project.trials, n_samples=n, seed=args.seed,
                            partial=_binary_partial(fit),
                            max_seconds=getattr(args, "posterior_seconds", MAX_SECONDS))


def resolved_names(project) -> list[str]:
    """"PM acetate → 1-methoxy-2-propyl acetate" for each library solvent typed otherwise
    than the library's name."""
    return shared_resolved_names(project.trials)  # the one rule, shared with the app


def demo_path() -> str:
    """The packaged demo results file (invented data), wherever solsphere is installed."""
    entry = files("solsphere.data.demo").joinpath("varnish_binder.csv")
    if not entry.is_file():
        raise InputError("the packaged demo results are missing from this installation.",
                         file="<command line>", column="--demo",
                         hint="reinstall solsphere (pip install --force-reinstall solsphere)")
    return str(entry)


def cmd_fit(args) -> int:
    if args.demo:
        if args.file is not None:
            raise InputError("--demo fits the packaged demo; a FILE was given too.",
                             file="<command line>", column="--demo",
                             hint="drop FILE or drop --demo")
        args.file = demo_path()
    if args.file is None:
        raise InputError("fit needs a results or project file.", file="<command line>",
                         hint="give FILE ('-' for standard input), or --demo")
    _check_table_target(args, [args.file])
    if args.save and os.path.isdir(args.save):  # a folder: only for several materials
        pass  # save_materials checks it; one material refuses it below
    elif args.save:  # said before the fit, and a pipe or device is never opened
        check_output(args.save, inputs=[args.file])
    if args.file == "-" or not is_project_file(args.file):
        lib = load_library()
        opts = reading(args)
        material = opts.pop("material")
        groups = read_materials(args.file, lib, **opts)
        label = groups[0].source
        if material is not None or len(groups) == 1:
            if material is not None or groups[0].material is not None:
                groups = [pick_material(groups, label, material)]
            project = Project(trials=groups[0])
            if groups[0].material is not None:
                project.settings["material"] = groups[0].material
            return _fit_single(args, project, lib)
        return _fit_many(args, groups)
    project, fit, lib = load_session(args, compare=not args.no_compare)
    return _fit_single(args, project, lib, fit)


def _fit_many(args, groups) -> int:
    """Several materials: one sphere each, on --jobs processes."""
    if args.spheres == 2 or args.compare or args.posterior or args.method != "classic":
        raise InputError("with several materials, fit makes the classic fit of each (with "
                         "--bootstrap and the re-check list); --spheres 2, --compare, "
                         "--posterior and --method graded work on one material.",
                         file="<command line>", column="--material",
                         hint="pick one material with --material NAME for those options")
    res = fit_materials(groups, partial=args.partial, method=args.method, seed=args.seed,
                        with_influence=not args.no_influence, n_bootstrap=args.bootstrap,
                        jobs=args.jobs)
    text = str(res)
    note = _table_out(args, res, "fits", [args.file])
    if args.save:
        paths = save_materials(groups, res, args.save, method=args.method)
        text += (f"\nSaved {len(paths)} projects (one per material) in {args.save}: "
                 + ", ".join(p.name for p in paths))
    _emit(args, res.to_dict(), text, note)
    if res.failed:
        print(f"solsphere: error: {args.file}: {len(res.failed)} of {len(res.fits)} materials "
              f"could not be fitted ({', '.join(res.failed)}); see the report.",
              file=sys.stderr)
        return 2
    return 0


def _fit_single(args, project, lib, fit=None) -> int:
    if args.save:  # one project: a file, never a folder, a pipe or a device
        check_output(args.save, inputs=[args.file])
    if fit is None:
        fit = fit_project(project, partial=args.partial, library=lib, seed=args.seed,
                          method=args.method, compare=not args.no_compare)
    obj, text = fit.to_dict(), str(fit)
    if fit.model_comparison is not None and fit.model_comparison.rows:
        best = next(r for r in fit.model_comparison.rows if r["recommended"])
        if (best["model"], best["partial"]) != (args.method, fit.partial):
            text += (f"\n    To fit with it: solsphere fit FILE --method {best['model']}"
                     + ("" if best["partial"] == "ordinal" else f" --partial {best['partial']}"))
    resolved = resolved_names(project)
    obj["resolved_names"] = resolved
    if resolved:
        text += "\nNames resolved: " + "; ".join(resolved)
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
                 f" leave-one-out refits of {n_trials:,} rows, above the limit of resample "
                 f"work (raise it with --max-resample-work N, or add --no-influence)")
    elif not args.no_influence:
        # leave-one-out refits rank the list; the flipped-result refits (the app shows
        # them) would double the time of every fit
        inf = influence(project.trials, partial=fit.partial, bounds=fit.bounds, flips=False)
        rows = inf.to_dict()["influence"]
        obj["influence"] = rows
        text += ("\n[[Re-check first]] (results whose removal moves the sphere most)\n"
                 + "\n".join(recheck_lines(rows)))
    if args.spheres == 2:
        two = fit_two_spheres(project.trials, partial=_binary_partial(fit), seed=args.seed)
        obj["two_spheres"] = two.to_dict()
        text += "\n" + str(two)
    if args.save:
        project.fit = fit.to_dict()
        project.settings["partial"] = fit.partial
        project.settings["method"] = args.method
        save(project, args.save)
        if not args.json:
            text += f"\nProject saved to {args.save}"
    note = _table_out(args, fit, "trials", [args.file])
    if project.settings.get("material"):
        obj["material"] = project.settings["material"]
    _emit(args, obj, text, note)
    return 0


def cmd_rank(args) -> int:
    _check_table_target(args, [args.file, args.candidates])
    project, fit, lib = load_session(args)
    pool, filters = candidate_pool(lib, **pool_options(args))
    tested = list(project.trials.names) + [t.cas for t in project.trials if t.cas]
    boot = _bootstrap(args, project, fit, args.bootstrap) if args.bootstrap else None
    if args.posterior:
        boot = _posterior(args, project, fit, args.posterior)
    ranking = rank_solvents(pool, (fit.dD, fit.dP, fit.dH), fit.R0, top=args.top, tested=tested,
                            include_tested=args.include_tested, filters=filters,
                            temperature_C=_temperature(args), bootstrap=boot)
    note = _table_out(args, ranking, "ranking", [args.file, args.candidates])
    _emit(args, ranking.to_dict(), str(ranking) + "\n" + _pool_line(filters), note)
    return 0


def cmd_next(args) -> int:
    if args.smiles is not None:
        return _next_from_structure(args)
    if args.file is None:
        raise InputError("next needs a results or project file, or --smiles for a first "
                         "plan from a structure.", file="<command line>",
                         hint="give FILE, or --smiles 'SMILES' when there are no results yet")
    _check_table_target(args, [args.file, args.candidates])
    project, fit, lib = load_session(args)
    pool, filters = candidate_pool(lib, **pool_options(args))
    boot = _bootstrap(args, project, fit, args.bootstrap) if args.bootstrap else None
    sugg = suggest_next(project.trials, candidates=pool, n=args.n or 5, bootstrap=boot,
                        n_samples=args.samples, seed=args.seed,
                        partial=_binary_partial(fit), progress=_progress(args, "resampling"))
    obj = dict(sugg.to_dict(), filters=filters)
    note = _table_out(args, sugg, "next trials", [args.file, args.candidates])
    _emit(args, obj, str(sugg) + "\n" + _pool_line(filters), note)
    return 0


def _structure():
    """The estimate package, or a one-line error naming the extra to install."""
    try:
        import solsphere.estimate as est  # deferred: RDKit is an optional extra
    except ImportError as exc:
        raise InputError(f"estimates from structure need RDKit ({exc}).",
                         file="<command line>",
                         hint="pip install 'solsphere[structure]'") from None
    return est


def _next_from_structure(args) -> int:
    if args.file is not None:
        raise InputError("--smiles plans the first trials when there are no results; "
                         "with results, leave it out.", file="<command line>",
                         column="--smiles", hint="drop FILE or drop --smiles")
    est = _structure()
    if est.features.parse_smiles(args.smiles) is None:
        raise InputError(f"--smiles {args.smiles!r} is not a SMILES that RDKit can read.",
                         file="<command line>", column="--smiles",
                         hint="check brackets, ring-closure digits and element symbols; "
                              "quote the SMILES in the shell")
    e = est.estimate([args.smiles])[0]
    if e.refused:
        raise InputError(f"--smiles {args.smiles!r}: no estimate: {e.refused}.",
                         file="<command line>", column="--smiles",
                         hint="run 'solsphere fit' on bench results instead")
    lib = load_library()
    pool, filters = candidate_pool(lib, **pool_options(args))
    plan = est.plan_from_structure(e, pool, n=args.n or 16, seed=args.seed)
    _emit(args, dict(plan.to_dict(), filters=filters), str(plan) + "\n" + _pool_line(filters))
    return 0


def cmd_estimate(args) -> int:
    est = _structure()
    for i, s in enumerate(args.smiles, 1):  # name the argument that is wrong
        if est.features.parse_smiles(s) is None:
            raise InputError(f"SMILES argument {i} ({s!r}) is not a SMILES that RDKit can "
                             f"read.", file="<command line>",
                             hint="check brackets, ring-closure digits and element symbols; "
                                  "quote the SMILES in the shell")
    items = [(None, s) for s in args.smiles]
    if args.source:
        items += est.read_structures(args.source, load_library())
    if not items:
        raise InputError("no structure given.", file="<command line>",
                         hint="give SMILES arguments or --from FILE")
    result = est.estimate([s for _, s in items], labels=[lab for lab, _ in items])
    _emit(args, result.to_dict(), str(result))
    return 0


def _pool_line(filters: dict) -> str:
    """Which candidates were used (and what a limit left out for lack of data)."""
    other = {"working solvents": " (--pool all: every library liquid, reagents included)",
             "library liquids": ": reagents, monomers and intermediates are included "
                                "(--pool working: the curated working solvents)"}
    line = f"Candidates: {filters['pool']}{other.get(filters['pool'], '')}."
    for what, names in (filters.get("left_out_for_lack_of_data") or {}).items():
        why = ("with no flash point to compare (not flammable by the data)"
               if what == "not_flammable" else f"for lack of {what.replace('_', ' ')} data")
        line += (f"\nLeft out {why} ({len(names)}): "
                 + ", ".join(names[:15]) + (" …" if len(names) > 15 else ""))
    return line


def _temperature(args) -> float:
    return 25.0 if args.temperature is None else args.temperature


def cmd_blend(args) -> int:
    if args.rank_by == "drying" and not args.drying:  # say so before the long screen
        raise InputError("ranking by drying needs the drying simulation.", setting="drying")
    _check_table_target(args, [args.file, args.candidates])
    project, fit, lib = load_session(args)
    design = design_blends(fit, lib, components=args.components, top=args.top,
                           rank_by=args.rank_by, drying=args.drying,
                           max_fraction=args.max_fraction, min_fraction=args.min_fraction,
                           with_single=args.with_single,
                           diverse=not args.all_combinations, **pool_options(args))
    note = _table_out(args, design, "blends", [args.file, args.candidates])
    _emit(args, design.to_dict(), str(design) + "\n" + _pool_line(design.screen.filters), note)
    return 0


def cmd_mixture(args) -> int:
    if not 0.0 <= args.humidity <= 100.0:
        raise InputError(f"--humidity {args.humidity:g} is not a relative humidity.",
                         file="<command line>", column="--humidity",
                         hint="give a percentage from 0 to 100")
    if not -60.0 <= args.temperature <= 300.0:
        raise InputError(f"--temperature {args.temperature:g} °C is outside -60 to 300 °C.",
                         file="<command line>", column="--temperature",
                         hint="give the process temperature in °C")
    lib = load_library()
    material = None
    if args.material:
        material = fit_project(load_any(args.material, library=lib), library=lib)
    report = analyse_mixture(args.spec, library=lib, material=material,
                             temperature_C=args.temperature, humidity=args.humidity / 100.0)
    _emit(args, report.to_dict(), str(report))
    return 0


def cmd_replace(args) -> int:
    _check_table_target(args, [args.for_material, args.candidates])
    lib = load_library()
    fit = None
    if args.for_material:
        fit = fit_project(load_any(args.for_material, library=lib, **reading(args)),
                          partial=args.partial, library=lib)
    result = find_replacements(lib, args.name, fit=fit, top=args.top, n_pairs=args.pairs,
                               allow_worse=args.allow_worse, **pool_options(args))
    text = str(result) + "\n" + _pool_line(result.filters)
    if args.name.strip().casefold() != result.target.name.casefold():
        text = f"Replacing {lib.resolved(args.name)}\n" + text
    note = _table_out(args, result, "replacements", [args.for_material, args.candidates])
    _emit(args, dict(result.to_dict(), resolved=lib.resolved(args.name)), text, note)
    return 0


def cmd_share(args) -> int:
    # an output ending in .png, .svg or .pdf gets the figure, any other the report page
    outputs = list(args.output)
    for out in outputs:  # said before any work, and a pipe or device is never opened
        check_output(out, inputs=[args.file])
        if image_format(out) is None:
            _check_share_target(out)
    if len(set(map(str, outputs))) < len(outputs):
        raise InputError("the same output is named twice.", file="<command line>",
                         column="-o", hint="give each -o a different file")
    project, fit, lib = load_session(args)
    boot = _bootstrap(args, project, fit, args.bootstrap) if args.bootstrap else None
    report = build_share(project, fit, lib, title=args.title, material=args.material_name,
                         notes=args.notes, top=args.top, n_blends=args.blends,
                         components=args.components, rank_by=args.rank_by,
                         diverse=not args.all_combinations, max_fraction=args.max_fraction,
                         min_fraction=args.min_fraction, replace=args.replace,
                         n_pairs=args.pairs, allow_worse=args.allow_worse, bootstrap=boot,
                         **pool_options(args))
    written, lines = [], []
    pages = [o for o in outputs if image_format(o) is None]
    if pages:
        page = report.html()
        for out in pages:
            atomic_write_text(out, page)
            n = len(page.encode())
            written.append({"path": out, "format": "html", "bytes": n})
            lines.append(f"Wrote {out} ({n / 1e6:.1f} MB, self-contained, opens offline)")
    images = [o for o in outputs if image_format(o) is not None]
    if images:
        fig = report.figure_for_image(args.figure)
        for img in write_images([(fig, o) for o in images], width=args.width,
                                height=args.height):
            written.append(img.to_dict())
            lines.append(f"Wrote {img.path} ({img.format.upper()}, {img.bytes / 1e3:.0f} kB)")
    first = written[0]
    _emit(args, {"output": first["path"], "bytes": first["bytes"], "outputs": written,
                 "report": report.to_dict()}, "\n".join(lines))
    return 0


def _check_share_target(path: str) -> None:
    """Refuse to replace an existing file that is not an HTML page (a results file or a
    project given to -o by mistake must never be lost)."""
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


def cmd_app(args) -> int:
    from solsphere.app.server import serve  # deferred: dash and the app are heavy to import

    serve(args.file, host=args.host, port=args.port, workers=args.workers,
          max_jobs=args.max_jobs)
    return 0


COMMANDS = {"fit": cmd_fit, "rank": cmd_rank, "blend": cmd_blend, "share": cmd_share,
            "replace": cmd_replace, "next": cmd_next, "app": cmd_app,
            "estimate": cmd_estimate, "mixture": cmd_mixture}
