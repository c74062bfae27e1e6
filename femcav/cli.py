"""The femcav command line."""

from __future__ import annotations

import argparse
import errno
import os
import sys

from . import __version__, exit_codes
from .errors import BrokenResultFolder, InputError, ResourceError, printable
from .verification import command as verification_command

EXIT_INPUT_ERROR = exit_codes.INPUT_ERROR
EXIT_CHECKS_FAILED = exit_codes.CHECKS_FAILED


class _OneLineParser(argparse.ArgumentParser):
    """argparse with the house rule for mistakes: one line on stderr and exit status 2 (the
    usage text stays with --help). The subcommands' parsers are of the same class."""

    def error(self, message: str):
        self.exit(EXIT_INPUT_ERROR,
                  f"femcav: error: {self.prog}: {printable(message)} (see {self.prog} --help)\n")


def _parser() -> argparse.ArgumentParser:
    parser = _OneLineParser(
        prog="femcav",
        description="Resonant modes of microwave cavities, open and periodic structures, by "
                    "finite elements.",
        epilog=exit_codes.epilog())
    parser.add_argument("--version", action="version", version=f"femcav {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", title="commands")
    solve = commands.add_parser(
        "solve", help="find the resonant modes of a case file and write the result files",
        description="Find the resonant modes of CASE and write table.txt, modes.csv, "
                    "modes.json and fields.vtu into the output folder.")
    solve.add_argument("case", metavar="CASE.toml", help="the case file")
    solve.add_argument("--out", metavar="DIR",
                       help="output folder (default: CASE-results next to the case file)")
    solve.add_argument("--modes", metavar="N", type=int, help="how many modes (overrides the case)")
    solve.add_argument("--near", metavar="FREQ",
                       help='find the modes nearest this frequency, e.g. "4.8 GHz"')
    solve.add_argument("--form", choices=("E", "H"), help="field form (overrides the case)")
    solve.add_argument("--order", type=int, choices=(1, 2, 3),
                       help="element order (overrides the case)")
    solve.add_argument("--factorization", choices=("auto", "superlu", "pardiso"),
                       help="sparse direct library for the shift-invert solves (overrides the "
                            "case; auto: PARDISO when installed, else SuperLU)")
    solve.add_argument("--method", choices=("auto", "direct", "iterative", "distributed"),
                       help="eigen backend (overrides the case; auto: by request and size, "
                            "the choice and its reason are printed; distributed: over MPI "
                            "processes, run under mpiexec)")
    solve.add_argument("--no-report", action="store_true",
                       help="skip the pictures and report.html (femcav show makes them later)")
    solve.add_argument("-q", "--quiet", action="store_true", help="no progress lines on stderr")
    _cluster_option(solve)
    sweep = _study_parser(
        commands, "sweep",
        "solve the case over the values of its [sweep] table and track the modes",
        "Re-mesh and solve CASE at every point of its [sweep] table, follow the modes from "
        "point to point by field overlap, and write sweep.json, sweep.csv and mode_chart.png "
        "into the output folder. Points already in the folder are reused: an interrupted "
        "sweep resumes.")
    _jobs_option(sweep, "points")
    _cluster_option(sweep)
    tune = _study_parser(
        commands, "tune",
        "find the parameter value that puts a mode on a target frequency (or Q_ext, k, τf)",
        "Solve CASE at the values Brent's method asks for inside the bracket of its [tune] "
        "table until the chosen mode (followed by field overlap) sits on the target; solve "
        "the result again with error bars; write tune.json.")
    _cluster_option(tune)
    dispersion = _study_parser(
        commands, "dispersion",
        "solve a periodic cell at a row of phase advances and follow its bands",
        "Mesh the periodic cell of CASE once, solve it at every phase advance of its "
        "[dispersion] table, follow the bands from phase to phase by field overlap, and write "
        "dispersion.json, dispersion.csv (frequency, phase and group velocities per band and "
        "phase) and dispersion.png into the output folder. Phases already in the folder are "
        "reused, on their mesh: an interrupted dispersion resumes.")
    _jobs_option(dispersion, "phases")
    _study_parser(
        commands, "extract",
        "find a sample's eps_r and loss tangent from measured f and Q, by the full model",
        "From the measured frequency and Q of one mode with and without the sample (the "
        "[extract] table), calibrate on the empty fixture, find the sample's eps_r by "
        "Brent's method on the full model and its tan delta from the Q; report the classic "
        "small-sample perturbation estimate beside it; write extract.json.")
    show = commands.add_parser(
        "show", help="draw pictures of the modes in a result folder, without solving",
        description="Draw mode_KK.png for every mode of OUTDIR (or for one) from its "
                    "modes.json and fields.vtu: |E| on the three principal cut planes, and "
                    "field arrows on the plane through the field's maximum.")
    show.add_argument("folder", metavar="OUTDIR", help="a folder written by femcav solve")
    show.add_argument("--mode", metavar="K", type=int, help="only mode K")
    show.add_argument("--arrows", choices=("E", "H"), default="E",
                      help="which field the arrows show (default E)")
    show.add_argument("--field", choices=("E", "H"), default="E",
                      help="which field's magnitude the colours show (default E)")
    mesh = commands.add_parser(
        "mesh", help="mesh without solving; print quality, write mesh and picture",
        description="Mesh CASE without solving. Print the element count, the minimum element "
                    "quality and the size per region; write mesh.msh, mesh.vtu and mesh.png "
                    "into the output folder.")
    mesh.add_argument("case", metavar="CASE.toml", help="the case file")
    mesh.add_argument("--out", metavar="DIR",
                      help="output folder (default: CASE-results next to the case file)")
    mesh.add_argument("-q", "--quiet", action="store_true", help="no progress lines on stderr")
    verification_command.add_parser(commands)
    return parser


def _jobs_option(parser, what: str) -> None:
    parser.add_argument("--jobs", metavar="N", type=int, default=1,
                        help=f"{what} solved at once in separate processes (default 1)")


def _cluster_option(parser) -> None:
    parser.add_argument("--cluster", metavar="ADDRESS",
                        help="solve the points on a Dask cluster: tcp://host:8786 for a "
                             "running scheduler, local:N for N worker processes here")


def _study_parser(commands, name: str, summary: str, description: str):
    """A study command: CASE, --out (default CASE-<name>) and --quiet."""
    study = commands.add_parser(name, help=summary, description=description)
    study.add_argument("case", metavar="CASE.toml", help="the case file")
    study.add_argument("--out", metavar="DIR",
                       help=f"output folder (default: CASE-{name} next to the case file)")
    study.add_argument("-q", "--quiet", action="store_true", help="no progress lines on stderr")
    return study


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    if args.command is None:
        _parser().print_help()
        return EXIT_INPUT_ERROR
    try:
        _only_solve_under_mpiexec(args.command)
        return {"mesh": _mesh, "sweep": _sweep, "tune": _tune, "extract": _extract,
                "dispersion": _dispersion,
                "show": _show, "verify": verification_command.run}.get(args.command,
                                                                       _solve)(args)
    except InputError as exc:
        return _fail(str(exc), exit_codes.INPUT_ERROR)
    except BrokenResultFolder as exc:
        return _fail(str(exc), exit_codes.BROKEN_RESULT_FOLDER)
    except KeyboardInterrupt:
        return _fail("interrupted (Ctrl-C); unfinished files removed",
                     exit_codes.INTERRUPTED)
    except ResourceError as exc:
        return _fail(str(exc), exit_codes.OUT_OF_MEMORY)
    except MemoryError as exc:
        return _fail(f"out of memory{f' ({exc})' if str(exc) else ''}; use a coarser mesh, "
                     "symmetry planes, a lower element order, [solve] method = \"iterative\" "
                     "or fewer --jobs", exit_codes.OUT_OF_MEMORY)
    except BrokenPipeError:
        # the reader of stdout went away (e.g. piped into head): nothing to tell it
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return exit_codes.FILE_SYSTEM
    except OSError as exc:
        return _fail(_describe_os_error(exc), exit_codes.FILE_SYSTEM)


def _fail(message: str, status: int) -> int:
    print(f"femcav: error: {message}", file=sys.stderr)
    return status


_OS_ADVICE = {
    errno.ENOSPC: "the disk is full; free some space or choose another --out",
    errno.EDQUOT: "the disk quota is used up; free some space or choose another --out",
    errno.EROFS: "the file system is read-only; choose another --out",
    errno.EACCES: "no permission; choose another --out or change the folder's permissions",
    errno.EPERM: "not permitted; choose another --out",
    errno.ENOTDIR: "choose a folder for --out, not a file",
    errno.EEXIST: "choose a folder for --out, not a file",
    errno.EISDIR: "a folder is in the way of a file",
}


def _describe_os_error(exc: OSError) -> str:
    """One line: the path, the system's reason and what to do."""
    from .io.atomic import intended_path

    where = intended_path(str(exc.filename)) if exc.filename is not None else "file system"
    reason = exc.strerror or type(exc).__name__
    advice = _OS_ADVICE.get(exc.errno)
    return f"{where}: {reason}" + (f" ({advice})" if advice else "")


def _solve(args) -> int:
    from .case import load_case
    from .progress import Progress
    from .schema import SOLVE, check_range, parse_value
    from .units import format_frequency

    # the same declarations as the case file's [solve] near and modes
    near_hz = None if args.near is None else parse_value(args.near, SOLVE.keys["near"], "--near")
    if args.modes is not None:
        check_range(args.modes, SOLVE.keys["modes"], "--modes")
    case = load_case(args.case)     # a mistake is said before the solver stack is loaded
    if args.cluster is not None:
        from .study.cluster import parse_cluster_address
        parse_cluster_address(args.cluster)
        if not case.tolerances:
            raise InputError("solve --cluster solves the morphed meshes and Monte-Carlo "
                             "samples of [tolerances]; this case has none",
                             field="--cluster", source=args.case)
    from .io.results import to_table
    from .solve_command import run_case

    writer = _writing_process(case, args)
    case, result, folder = run_case(case, out=args.out, modes=args.modes, near_hz=near_hz,
                                    form=args.form, order=args.order,
                                    factorization=args.factorization, method=args.method,
                                    cluster=args.cluster, write=writer,
                                    progress=Progress(quiet=args.quiet or not writer))
    if not writer:
        return 0
    count = len(result.modes)
    what = (f"{count} modes nearest {format_frequency(result.near_hz)}" if result.near_hz
            else f"lowest {count} modes")
    aim = ("" if case.accuracy_plan is None
           else f", aiming at {case.accuracy_plan.target:.0e} in frequency")
    print(f"{printable(case.title)}: {what}, {result.form} form, order {result.order}, "
          f"{result.dofs} DOFs, {result.elements} {result.element_kind}{aim}")
    print(to_table(result))
    if result.static_fields_dropped:
        print(f"({result.static_fields_dropped} static field(s) at zero frequency left out)")
    print(f"results: {folder}")
    if not args.no_report:
        _report(folder, quiet=args.quiet)
    return _solve_status(result)


def _only_solve_under_mpiexec(command: str) -> None:
    from .eigen.petsc_stack import launched_processes

    if command != "solve" and launched_processes() > 1:
        raise InputError(f"femcav {command} runs as one process; only femcav solve with "
                         "method \"distributed\" runs under mpiexec")


def _writing_process(case, args) -> bool:
    """Whether this process writes the results: always, but for a distributed solve only
    rank 0 (every process solves; PETSc and MPI are loaded here, so that a missing one is
    said before any work). Several processes without method "distributed" would each
    write the same files: refused."""
    from .eigen.petsc_stack import launched_processes, load

    method = args.method or case.solve.method
    if method != "distributed":
        if launched_processes() > 1:
            raise InputError(f"{launched_processes()} processes were started (mpiexec) but "
                             f"the method is {method!r}; use --method distributed",
                             field="solve.method", source=args.case)
        return True
    if (case.solve.azimuthal_orders is not None or case.solve.complex_check
            or case.solve.losses_inside):
        raise InputError("method \"distributed\" solves lossless 3D models (Hermitian "
                         "pencils); bodies of revolution, the complex check and losses inside "
                         "the solve run serially", field="solve.method", source=args.case)
    if args.cluster is not None:
        raise InputError("--cluster and method \"distributed\" do not combine",
                         field="--cluster", source=args.case)
    return load().rank == 0


def _solve_status(result) -> int:
    """Warnings on stderr for modes not to trust, and the exit status they imply."""
    from .post.loss_validity import loss_validity_summary
    from .post.resolution import unresolved_summary
    from .units import format_frequency

    asked = result.request.count if result.request is not None else len(result.modes)
    # an open problem's layer modes were counted on stderr already (post.radiation)
    if len(result.modes) + len(getattr(result, "layer_modes", ())) < asked:
        print(f"femcav: warning: {asked} modes asked for, {len(result.modes)} returned: the "
              "mesh's discrete problem holds no more (refine the mesh for more)",
              file=sys.stderr)
    status = exit_codes.OK
    if not result.passed:
        print("femcav: warning: at least one mode FAILED its checks; do not trust those "
              "frequencies (see the check column)", file=sys.stderr)
        status = EXIT_CHECKS_FAILED
    for line in unresolved_summary(result.modes, result.near_hz, format_frequency):
        print(f"femcav: warning: {line}", file=sys.stderr)
        status = EXIT_CHECKS_FAILED
    for line in loss_validity_summary(result.modes):
        print(f"femcav: warning: {line}", file=sys.stderr)
    return status


def _sweep(args) -> int:
    from .progress import Progress
    from .study.sweep import run_sweep, summary_lines

    document, folder = run_sweep(args.case, out=args.out, jobs=args.jobs,
                                 cluster=args.cluster, progress=Progress(quiet=args.quiet))
    print("\n".join(summary_lines(document)))
    print(f"results: {folder}")
    return exit_codes.CHECKS_FAILED if document.get("failed_points") else 0


def _dispersion(args) -> int:
    from .progress import Progress
    from .study.dispersion import checks_failed, run_dispersion, summary_lines

    document, folder = run_dispersion(args.case, out=args.out, jobs=args.jobs,
                                      progress=Progress(quiet=args.quiet))
    print("\n".join(summary_lines(document)))
    print(f"results: {folder}")
    return exit_codes.CHECKS_FAILED if checks_failed(document) else 0


def _tune(args) -> int:
    from .progress import Progress
    from .study.tune import run_tune, summary_lines

    document, folder = run_tune(args.case, out=args.out, cluster=args.cluster,
                                progress=Progress(quiet=args.quiet))
    print("\n".join(summary_lines(document)))
    print(f"results: {folder}")
    return 0


def _extract(args) -> int:
    from .progress import Progress
    from .study.extract import run_extract, summary_lines

    document, folder = run_extract(args.case, out=args.out,
                                   progress=Progress(quiet=args.quiet))
    print("\n".join(summary_lines(document)))
    print(f"results: {folder}")
    return 0


def _report(folder, *, quiet: bool) -> None:
    """Pictures and report.html after a solve; the results are already safe, so a failure
    here is a warning, not an error."""
    import time

    from .viz.show import show

    t0 = time.perf_counter()
    try:
        show(folder)
    except Exception as exc:  # noqa: BLE001 - rendering must never cost the results
        print(f"femcav: warning: pictures and report not made ({type(exc).__name__}: {exc}); "
              f"try femcav show {folder}", file=sys.stderr)
        return
    if not quiet:
        print(f"[report] pictures and report.html in {time.perf_counter() - t0:.1f} s",
              file=sys.stderr)
    print(f"report: {folder / 'report.html'}")


def _show(args) -> int:
    from .viz.show import show

    for path in show(args.folder, mode=args.mode, arrows=args.arrows, field=args.field):
        print(path)
    return 0


def _mesh(args) -> int:
    from .io.mesh_summary import mesh_summary
    from .mesh_runner import mesh_case
    from .progress import Progress

    run = mesh_case(args.case, out=args.out, progress=Progress(quiet=args.quiet))
    print(mesh_summary(printable(run.case.title), run.quality))
    print(f"mesh files: {run.folder}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
