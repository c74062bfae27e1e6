"""`femcav verify`: its arguments, and the run from arguments to files and exit status.

Only argparse and the standard library are imported here at first, so that `femcav --help`
stays free of the solver stack."""

from __future__ import annotations

from pathlib import Path

DEFAULT_FOLDER = "verify-results"


def add_parser(commands) -> None:
    verify = commands.add_parser(
        "verify", help="solve the catalogue of reference cavities and compare with closed forms",
        description="Solve a catalogue of reference cavities (box, pillbox, sphere, coaxial "
                    "line, slab-loaded, graded and layered fills, a lossy filling, bodies of "
                    "revolution) through the same path as a case file, at two or three mesh "
                    "sizes each, and compare with closed forms computed now. Prints a table and "
                    "writes verify.json and verify.html; exit status 3 if any case fails.")
    size = verify.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true",
                      help="two coarse meshes per case (the default; well under a minute)")
    size.add_argument("--full", action="store_true",
                      help="three meshes per case, finer (a few minutes)")
    verify.add_argument("--out", metavar="DIR", default=DEFAULT_FOLDER,
                        help=f"output folder (default: {DEFAULT_FOLDER} in the current folder)")
    verify.add_argument("--jobs", metavar="N", type=int, default=1,
                        help="cases solved at once in separate processes (default 1)")
    verify.add_argument("--only", metavar="NAME[,NAME]",
                        help="run only these cases of the catalogue")
    verify.add_argument("-q", "--quiet", action="store_true", help="no progress lines on stderr")


def verify(out: str | Path = DEFAULT_FOLDER, *, full: bool = False,
           only: tuple[str, ...] | None = None, jobs: int = 1, adjust_case=None,
           quiet: bool = False) -> tuple[dict, Path, int]:
    """Run the catalogue, print the table, write verify.json and verify.html into ``out``;
    (document, folder, exit status). ``adjust_case`` changes every loaded case before it is
    solved (see run.Request)."""
    from .. import exit_codes
    from ..errors import InputError
    from ..io.atomic import check_output_folder, staged_output
    from ..io.strict_json import dumps
    from .report_html import render
    from .run import Request, run_verification, selected_cases
    from .table import format_table

    if jobs < 1:
        raise InputError(f"must be 1 or more, got {jobs}", field="--jobs")
    selected_cases(only)                       # a wrong name is said before any work
    folder = check_output_folder(Path(out))
    document = run_verification(Request(mode="full" if full else "quick", only=only,
                                        jobs=jobs, adjust_case=adjust_case, quiet=quiet))
    print(format_table(document), flush=True)
    with staged_output(folder, kind="verify") as files:
        files.write_text("verify.json", dumps(document, indent=1))
        files.write_text("verify.html", render(document))
    print(f"results: {folder}")
    return document, folder, exit_codes.OK if document["passed"] else exit_codes.CHECKS_FAILED


def run(args) -> int:
    only = None if args.only is None else tuple(n.strip() for n in args.only.split(",")
                                                if n.strip())
    return verify(args.out, full=args.full, only=only, jobs=args.jobs, quiet=args.quiet)[2]
