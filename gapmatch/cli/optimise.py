"""``gapmatch optimise``: the best band gaps of a stack under constraints."""

from __future__ import annotations

import argparse
import sys

from ..core.registry import CONNECTIONS
from ..errors import InputError
from ..io.atomic import check_writable, write_atomic
from ..io.finite import dumps
from ..search import SAMPLERS, SearchInterrupted, make_problem, optimise
from ..search.runner import default_study_name, shell_join
from ..search.storage import DEFAULT_STORAGE
from .commands import COMMANDS
from .energy import add_site_arguments
from .options import add_condition_options, condition_kwargs, output_notes
from .parsing import names, old_spelling

CONNECTION_TYPE, CONNECTION_NAMES = names(CONNECTIONS)
SAMPLER_TYPE, SAMPLER_NAMES = names(SAMPLERS)
#: what a study file sets: these options cannot be combined with --study
STUDY_SETS = (
    "--junctions",
    "--thickness-window",
    "--absorber",
    "--thickness",
    "--alpha0",
    "--urbach-energy",
    "--light-trapping",
    "--refractive-index",
    "--alpha-file",
    "--connection",
    "--cells-per-string",
    "--bounds",
    "--fix",
    "--min-spacing",
    "--min-photocurrent-ratio",
    "--robustness",
    "--spectrum",
    "--sun-temperature",
    "--spectrum-file",
    "--spectrum-column",
    "--irradiance",
    "--concentration",
    "--temperature",
    "--ere",
    "--dark-current",
)
#: allowed seeds (numpy and optuna samplers take 32-bit unsigned seeds)
SEED_RANGE = (0, 2**32 - 1)


def register(sub) -> None:
    p = sub.add_parser(
        "optimise",
        help=COMMANDS["optimise"],
        description="Global search for the band gaps that maximise the detailed-balance "
        "efficiency of a stack under gap windows, fixed gaps, a minimum spacing and an "
        "optional photocurrent-mismatch limit; reports the best stack and distinct "
        "alternative optima. Trials are stored (SQLite by default) and the study can be "
        "resumed. Theoretical limits, not ratings.",
    )
    p.add_argument(
        "--junctions",
        type=int,
        metavar="N",
        help="number of junctions, 2-6 (required unless --study is given)",
    )
    p.add_argument(
        "--study",
        metavar="TOML",
        help="run the search a study file describes ([search] table, with the study's "
        "spectrum, conditions and materials); --trials and --seed override the file; "
        "options the file sets (--junctions, --connection, the constraints, spectrum "
        "and conditions) are refused with it",
    )
    p.add_argument(
        "--connection",
        default="series",
        type=CONNECTION_TYPE,
        choices=CONNECTION_NAMES,
        help="series (two-terminal), independent (multi-terminal) or "
        "voltage-matched; any case (default series)",
    )
    p.add_argument(
        "--cells-per-string",
        type=int,
        nargs="+",
        metavar="N",
        help="voltage-matched only: cells per string for each junction, top first",
    )
    g = p.add_argument_group("variables and constraints")
    g.add_argument(
        "--bounds",
        nargs="+",
        metavar="LO:HI",
        help="gap window [eV]: one LO:HI for every junction, or one per junction "
        "top first (use '-' for a junction given by --fix); default 0.5:3.0",
    )
    g.add_argument(
        "--fix",
        nargs="+",
        metavar="J=EV",
        default=[],
        action="extend",
        help="fix junction J (1 = top, or 'top' / 'bottom') at a gap [eV], e.g. --fix "
        "bottom=1.12; one value per junction (may be repeated for other junctions)",
    )
    g.add_argument(
        "--min-spacing",
        type=float,
        default=0.05,
        metavar="EV",
        help="smallest difference between neighbouring gaps [eV], 0-1 (default 0.05)",
    )
    ratio = g.add_argument(
        "--min-photocurrent-ratio",
        dest="min_photocurrent_ratio",
        type=float,
        metavar="R",
        help="smallest allowed ratio of the smallest to the largest junction "
        "photocurrent, J_min / J_max, (0, 1], e.g. 0.95 (default: no limit)",
    )
    old_spelling(g, "--min-mismatch-ratio", ratio)
    g.add_argument(
        "--robustness",
        type=float,
        nargs="?",
        const=0.02,
        metavar="DELTA_EV",
        help="add a second objective: worst efficiency when every free gap moves "
        "by up to +/- DELTA [eV] (default 0.02 when given without a value); "
        "reports the Pareto front",
    )
    s = p.add_argument_group("search")
    s.add_argument(
        "--trials",
        type=int,
        metavar="N",
        help="total optuna trials of the study (default 20 + 5 per free gap, "
        "doubled with --robustness); a resumed study runs only the missing ones",
    )
    s.add_argument(
        "--seed",
        type=int,
        default=None,
        help=f"random seed, a whole number {SEED_RANGE[0]}-{SEED_RANGE[1]} (default 0)",
    )
    s.add_argument(
        "--workers",
        type=int,
        default=1,
        metavar="N",
        help="processes sharing the storage (default 1)",
    )
    s.add_argument(
        "--sampler",
        default="tpe",
        type=SAMPLER_TYPE,
        choices=SAMPLER_NAMES,
        help="optuna sampler of the trial stage (default tpe)",
    )
    s.add_argument(
        "--storage",
        metavar="URL_OR_PATH",
        help=f"SQLite file or optuna database URL, e.g. postgresql://user@host/db "
        f"(default {DEFAULT_STORAGE}); ':memory:' keeps nothing",
    )
    search_name = s.add_argument(
        "--search-name",
        dest="search_name",
        metavar="NAME",
        help="name of the stored search (optuna study) to create or resume (default: "
        "derived from the problem, the seed and the sampler; an existing search made "
        "with other settings is an error)",
    )
    old_spelling(s, "--study-name", search_name)
    s.add_argument("--csv", metavar="PATH", help="write every trial to this CSV file")
    s.add_argument("--no-progress", action="store_true", help="no progress bar")
    add_condition_options(p)
    add_thickness_options(p)
    add_site_arguments(p)  # --weather etc.: annual-energy objective (gapmatch.cli.energy)
    p.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object: the best stack's full evaluation (the keys "
        "of 'gapmatch evaluate --json') plus 'alternatives' and 'search'",
    )
    p.set_defaults(func=run)


def _fixed(items: list[str], n: int) -> dict[int, float]:
    out: dict[int, float] = {}
    for it in items:
        key, sep, val = it.partition("=")
        if not sep:
            raise InputError("--fix", "needs J=EV, e.g. 2=1.12 or bottom=1.12", it)
        key = key.strip().lower()
        j = n if key == "bottom" else 1 if key == "top" else None
        if j is None:
            try:
                j = int(key)
            except ValueError:
                raise InputError(
                    "--fix", "junction must be a number (1 = top), 'top' or 'bottom'", it
                ) from None
        try:
            gap = float(val)
        except ValueError:
            raise InputError("--fix", "gap must be a number [eV]", it) from None
        if j in out:
            raise InputError(
                "--fix",
                f"junction {j} is fixed twice ({out[j]:g} and {gap:g} eV); fix each junction once",
            )
        out[j] = gap
    return out


def _bounds(items: list[str] | None, n: int):
    if not items:
        return None
    wins = []
    for it in items:
        if it.strip() == "-":
            wins.append((0.5, 3.0))
            continue
        lo, sep, hi = it.partition(":")
        try:
            wins.append((float(lo), float(hi)))
        except ValueError:
            raise InputError("--bounds", "needs LO:HI in eV, e.g. 1.5:2.2", it) from None
        if not sep:
            raise InputError("--bounds", "needs LO:HI in eV, e.g. 1.5:2.2", it)
    if len(wins) == 1:
        return wins[0]
    return wins


def _refuse_with_study(args: argparse.Namespace) -> None:
    """The study file sets the problem and its conditions: options that would change
    them are refused (they would otherwise be silently ignored)."""
    given = [o for o in STUDY_SETS if o in set(getattr(args, "given", ()))]
    if given:
        raise InputError(
            "--study",
            f"the study file sets the problem and its conditions; {', '.join(given)} "
            "cannot be used with it (edit the file, or leave out --study)",
        )


def _problem_from_args(args: argparse.Namespace):
    """The search problem and its default trials and seed, from a study or the options."""
    if args.study:
        _refuse_with_study(args)
        from ..search.study_table import problem_from_study, search_settings
        from ..study import load_study

        study = load_study(args.study)
        cfg = search_settings(study)
        return problem_from_study(study), cfg["trials"] or None, cfg["seed"]
    n = args.junctions
    if n is None:
        raise InputError(
            "--junctions",
            "is required (a whole number from 2 to 6) unless --study names a study file",
        )
    if not isinstance(n, int) or not 2 <= n <= 6:
        raise InputError("--junctions", "must be a whole number from 2 to 6", n)
    if getattr(args, "spectrum_column", None) is not None:
        raise InputError(
            "--spectrum-column",
            "is not available for optimise (a stored search records the spectrum by its "
            "file); save that column as a two-column file for --spectrum-file",
        )
    cond = condition_kwargs(args, n)
    if args.cells_per_string is not None:
        cond["cells_per_string"] = args.cells_per_string
    problem = make_problem(
        n,
        args.connection,
        bounds_eV=_bounds(args.bounds, n),
        fixed_eV=_fixed(args.fix, n) or None,
        min_spacing_eV=args.min_spacing,
        min_mismatch_ratio=args.min_photocurrent_ratio,
        robustness_eV=args.robustness,
        **thickness_kwargs(args, n),
        **cond,
    )
    return problem, None, 0


def _check_before_search(args: argparse.Namespace) -> None:
    """Checks that need no computing, made before the search starts."""
    if args.seed is not None and not SEED_RANGE[0] <= args.seed <= SEED_RANGE[1]:
        raise InputError(
            "--seed", f"must be a whole number in [{SEED_RANGE[0]}, {SEED_RANGE[1]}]", args.seed
        )
    if args.workers is not None and args.workers < 1:
        raise InputError("--workers", "must be a whole number of at least 1", args.workers)
    if args.trials is not None and args.trials < 1:
        raise InputError("--trials", "must be a whole number of at least 1", args.trials)
    if args.csv:
        check_writable(args.csv, "--csv")


# ---- finite absorbers and searched thicknesses (--thickness-window) ---------------------
def add_thickness_options(p: argparse.ArgumentParser) -> None:
    """Finite absorbers, and absorber thicknesses searched with the gaps."""
    from .evaluate import ABSORBER_NAMES, ABSORBER_TYPE, TRAPPING_NAMES, TRAPPING_TYPE

    g = p.add_argument_group(
        "finite absorbers and thickness windows (one value for every junction or one per "
        "junction, top first; a model projection, not an ideal ceiling)"
    )
    g.add_argument(
        "--thickness-window",
        nargs=3,
        action="append",
        default=[],
        metavar=("J", "LOW_NM", "HIGH_NM"),
        help="search junction J's absorber thickness (J = 1 for the top, 'top' or "
        "'bottom') between LOW and HIGH [nm], 1 to 1e8, on a log scale, jointly with the "
        "gaps; repeatable; needs a finite --absorber for J. E.g. --thickness-window top "
        "100 2000 thins the top cell to share current in a two-terminal stack; the "
        "thick-absorber optimum (HIGH) is reported beside it",
    )
    g.add_argument(
        "--absorber",
        nargs="+",
        type=ABSORBER_TYPE,
        choices=ABSORBER_NAMES,
        metavar="MODEL",
        help="absorptance model: step (default, ideal), direct, indirect or alpha-file "
        "(--alpha-file; 'table' is accepted too)",
    )
    g.add_argument(
        "--thickness",
        type=float,
        nargs="+",
        metavar="NM",
        help="fixed absorber thickness [nm], 1 to 1e8, of finite junctions without "
        "a --thickness-window (ignored for step and windowed junctions)",
    )
    g.add_argument(
        "--alpha0",
        type=float,
        nargs="+",
        metavar="PER_CM",
        help="absorption coefficient 1 eV above the gap [cm^-1], 1 to 1e7 "
        "(default 5e4 direct, 4.5e3 indirect)",
    )
    g.add_argument(
        "--urbach-energy",
        type=float,
        nargs="+",
        metavar="MEV",
        help="Urbach energy of the sub-gap tail [meV], 0 to 100 (default 0: none)",
    )
    g.add_argument(
        "--light-trapping",
        nargs="+",
        type=TRAPPING_TYPE,
        choices=TRAPPING_NAMES,
        metavar="MODE",
        help="single pass (default), double pass (ideal rear mirror) or lambertian "
        "(4 n^2 path enhancement)",
    )
    g.add_argument(
        "--refractive-index",
        type=float,
        nargs="+",
        metavar="N",
        help="absorber refractive index, 1 to 6 (default 3.5; Lambertian trapping)",
    )
    g.add_argument(
        "--alpha-file",
        metavar="PATH",
        help="CSV of wavelength [nm] and absorption coefficient [cm^-1] for every "
        "alpha-file junction",
    )


def _thickness_windows(items: list[list[str]], n: int) -> dict[int, tuple[float, float]]:
    out: dict[int, tuple[float, float]] = {}
    for j_s, lo_s, hi_s in items:
        key = j_s.strip().lower()
        j = n if key == "bottom" else 1 if key == "top" else None
        if j is None:
            try:
                j = int(key)
            except ValueError:
                raise InputError(
                    "--thickness-window",
                    "junction must be a number (1 = top), 'top' or 'bottom'",
                    j_s,
                ) from None
        if not 1 <= j <= n:
            raise InputError("--thickness-window", f"junction numbers run from 1 (top) to {n}", j_s)
        if j in out:
            raise InputError("--thickness-window", f"gives junction {j} twice", j_s)
        try:
            lo, hi = float(lo_s), float(hi_s)
        except ValueError:
            raise InputError(
                "--thickness-window", "needs J LOW_NM HIGH_NM, e.g. top 100 2000", [lo_s, hi_s]
            ) from None
        out[j] = (lo, hi)
    return out


def thickness_kwargs(args: argparse.Namespace, n: int) -> dict:
    """:func:`gapmatch.search.make_problem` keywords of :func:`add_thickness_options`."""
    kw: dict = {}
    for opt, key in (
        ("absorber", "absorber"),
        ("thickness", "thickness_nm"),
        ("alpha0", "alpha0_per_cm"),
        ("urbach_energy", "urbach_energy_meV"),
        ("light_trapping", "light_trapping"),
        ("refractive_index", "refractive_index"),
        ("alpha_file", "alpha_file"),
    ):
        v = getattr(args, opt, None)
        if v is not None:
            kw[key] = v[0] if isinstance(v, list) and len(v) == 1 else v
    windows = _thickness_windows(getattr(args, "thickness_window", None) or [], n)
    if windows:
        kw["thickness_windows_nm"] = windows
    if kw and getattr(args, "weather", None):
        raise InputError(
            "--thickness-window" if windows else "--absorber",
            "finite absorbers and thickness windows apply to the AM1.5G-type efficiency "
            "search; the annual-energy search (--weather) takes step absorbers only",
        )
    return kw


def format_thickness(res) -> str:
    """The thinned optimum beside the thick-absorber one (text; units in the headers)."""
    ref = res.thick_reference
    name = res.problem.objective.name
    rows = [
        (
            "thinned",
            res.best["gaps_eV"],
            res.best_thickness_nm,
            res.best["efficiency"],
            [j["jsc_mA_cm2"] for j in res.best["junctions"]],
        ),
        ("thick", ref["gaps_eV"], ref["thickness_nm"], ref[name], ref["jsc_mA_cm2"]),
    ]
    wins = ", ".join(
        f"junction {j}: {lo:g}-{hi:g} nm"
        for j, (lo, hi) in res.problem.thickness_windows_nm().items()
    )
    lines = [
        "",
        f"Thickness search ({wins}); thick = every window at its upper end:",
        f"{'optimum':<8} {'gaps [eV]':<22} {'thickness [nm]':<26} {'efficiency [%]':>14}  "
        "Jsc per junction [mA cm^-2]",
    ]
    for label, gaps, th, eff, jsc in rows:
        ts = " / ".join("-" if t is None else f"{t:.4g}" for t in th)
        lines.append(
            f"{label:<8} {' / '.join(f'{g:.4f}' for g in gaps):<22} {ts:<26} "
            f"{100 * eff:14.3f}  {' / '.join(f'{j:.2f}' for j in jsc)}"
        )
    lines.append(
        "Model projection with finite absorbers (the absorber models and their "
        "parameters), not an ideal detailed-balance ceiling."
    )
    return "\n".join(lines)


# -------------------------------------------------------------------------------------------


def run(args: argparse.Namespace) -> int:
    _check_before_search(args)
    problem, default_trials, default_seed = _problem_from_args(args)
    trials = args.trials if args.trials is not None else default_trials
    seed = args.seed if args.seed is not None else default_seed
    if getattr(args, "weather", None):  # annual energy at a site (gapmatch.cli.energy)
        from .energy import run_site_search

        return run_site_search(args, problem, trials=trials, seed=seed, study_name=args.search_name)
    study_name = args.search_name or default_study_name(problem, seed=seed, sampler=args.sampler)
    argv = ["gapmatch", *sys.argv[1:]] if sys.argv and "gapmatch" in sys.argv[0] else None
    resume = shell_join(
        (argv or ["gapmatch", "optimise", "..."])
        + ([] if args.search_name else ["--search-name", study_name])
    )
    try:
        res = optimise(
            problem,
            trials=trials,
            seed=seed,
            storage=args.storage,
            study_name=study_name,
            workers=args.workers,
            sampler=args.sampler,
            progress=not args.no_progress,
            resume_command=resume,
        )
    except SearchInterrupted as stop:
        return stop.exit_code  # 130 after SIGINT, 143 after SIGTERM
    except InputError as exc:  # the stored search's name is --search-name here
        problem = str(exc.problem).replace("--study-name", "--search-name")
        raise InputError(exc.field, problem, exc.value) from None
    if args.csv:
        write_atomic(args.csv, res.to_frame().to_csv(index=False))
    if args.json:
        # stdout: exactly the keys of 'gapmatch evaluate --json' plus 'alternatives';
        # where the study lives goes to stderr
        out = res.to_dict()
        meta = out.pop("search")
        out.pop("robust_optima", None)
        out["notes"] = output_notes(args) if not args.study else []
        print(dumps(out, what="optimise --json", indent=2))
        print(
            f"study {meta['study_name']!r} in {meta['storage']}: {meta['trials']} trials"
            f"{' (resumed)' if meta['resumed'] else ''}, seed {meta['seed']}, "
            f"{meta['elapsed_s']:.1f} s",
            file=sys.stderr,
        )
        return 0
    print(format_summary(res, output_notes(args) if not args.study else []))
    if res.thick_reference is not None:
        print(format_thickness(res))
    return 0


def format_summary(res, notes: list[str] = ()) -> str:
    """Readable text summary of a search (units in every header)."""
    d = res.best
    lines = [
        f"Best {res.problem.n_junctions}-junction stack, {d['connection']} connection: "
        f"{' / '.join(f'{g:.4f}' for g in d['gaps_eV'])} eV, "
        f"efficiency {d['efficiency_pct']:.3f} %",
        f"Spectrum: {d['conditions']['spectrum']}",
        *(f"Note: {x}" for x in notes),
        f"Search {res.study_name!r} in {res.storage}: {res.n_trials} trials"
        f"{' (resumed)' if res.resumed else ''}, seed {res.seed}, {res.elapsed_s:.1f} s; "
        + (
            "polished to a local maximum (no better neighbour at 1e-4 eV)"
            if res.local_max_check_passed
            else "polished; the local-maximum check found a better neighbour at 1e-4 eV"
        ),
    ]
    if res.alternatives:
        lines += ["", f"{'rank':>4} {'gaps [eV], top first':<44} {'efficiency [%]':>14}"]
        for i, a in enumerate(res.alternatives):
            gaps = " / ".join(f"{g:.3f}" for g in a["gaps_eV"])
            lines.append(f"{i + 2:>4} {gaps:<44} {100 * a['efficiency']:14.3f}")
    if res.robust_optima:
        lines += ["", "Most robust stacks (worst case within the tolerance):"]
        for r in res.robust_optima:
            gaps = " / ".join(f"{g:.3f}" for g in r["gaps_eV"])
            lines.append(
                f"     {gaps:<44} {100 * r['efficiency']:8.3f} % "
                f"(worst {100 * r['worst_efficiency']:.3f} %)"
            )
    for w in d.get("warnings", []):
        lines.append(f"Warning: {w}")
    lines.append(
        "Detailed-balance limit under ideal assumptions: a theoretical ceiling, not a rating."
    )
    return "\n".join(lines)
