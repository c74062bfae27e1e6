"""Mutation testing: what share of small deliberate bugs in femcav do the tests catch?

Each package is copied, with the tests, into a scratch folder where mutmut (from the package
registry, `pip install -e '.[mutation]'`) writes its mutants: one small change each (an operator
or comparison swapped, a constant changed, an argument dropped or set to None, a string
altered...). A mutant is *killed* when the package's test selection fails on it (a crash counts),
*timed out* when the tests take more than TIMEOUT_FACTOR times their clean run, and *survived*
when they pass, or when no test in the selection reaches the changed function. A load on the
machine also makes clean runs slow, so every timed-out mutant is run once more, alone, with
RETRY_FACTOR times the clean run: one that passes then survived, one that fails was killed,
and only one that times out again counts as timed out (detected: a run that hangs is
noticed). Without this second run a sample taken beside other jobs scored 82.5 % where the
hand-checked truth was 74.2 %.

Why mutmut and not a runner of our own: it runs the tests in forked copies of one process that
has already imported numpy, scipy, scikit-fem and gmsh (about 3 s saved per mutant), and it
runs only the tests that call the mutated function, fastest first, stopping at the first
failure. Its first step per package is one traced run of the selection (the "stats"), which
costs about one clean run of it.

The whole population is about 1100 mutants per package and a survivor costs a full run of the
tests that reach it (up to a minute here), so by default a seeded random sample of SAMPLE
mutants per package is tried; the score then comes with a 95 % Wilson interval for a binomial
proportion (E. B. Wilson, J. Am. Stat. Assoc. 22 (1927) 209-212; from memory), which ignores
the finite-population correction and so is slightly wide.

    OMP_NUM_THREADS=1 python benchmarks/mutation.py                    # 4 packages, 40 each
    python benchmarks/mutation.py femcav/post --sample 60 --seed 7
    python benchmarks/mutation.py femcav/fem --sample 0                # every mutant (hours)

Writes benchmarks/out/mutation.json (the table and every mutant tried with its status) and
benchmarks/out/mutation_survivors.txt (file, line and diff of each survivor, for review;
the reviewed list with explanations is benchmarks/mutation_survivors.md).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import asdict, dataclass, field
from datetime import date
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "benchmarks" / "out"
THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
TIMEOUT_FACTOR = 3.0
RETRY_FACTOR = 12.0

# The test selection of each package: the files that exercise it, without the slowest studies
# whose ground the others already cover (a survivor costs a run of every selected test that
# reaches it). Entries are pytest arguments.
SELECTIONS: dict[str, list[str]] = {
    "femcav/fem": [
        "tests/test_gradient.py", "tests/test_lobpcg_hx.py", "tests/test_selection.py",
        "tests/test_box.py", "tests/test_orders.py", "tests/test_forms.py",
        "tests/test_assembly.py", "tests/test_constraints.py",
        "tests/test_mutation_survivors.py",
    ],
    "femcav/eigen": [
        "tests/test_factorization.py", "tests/test_selection.py", "tests/test_lobpcg_hx.py",
        "tests/test_box.py", "tests/test_eigen_backends.py",
        "tests/test_losses.py::test_perturbation_agrees_with_the_complex_solve",
        "tests/test_loss_validity.py::test_pairing_is_one_to_one_and_leaves_the_rest_unpaired",
        "tests/test_loss_validity.py::test_a_very_lossy_dielectric_is_flagged_and_pairs_one_to_one",
        "tests/test_mutation_survivors.py",
    ],
    "femcav/post": [
        "tests/test_error_estimate.py", "tests/test_losses.py", "tests/test_classify.py",
        "tests/test_sensitivity.py", "tests/test_mesh_command.py", "tests/test_loaded.py",
        "tests/test_axisymmetric.py::test_singular_parts_get_the_slower_rate_for_their_bars",
        "tests/test_resolution.py", "tests/test_loss_validity.py",
        "tests/test_mutation_survivors.py", "tests/test_beam_figures.py",
        "tests/test_surface_resistance.py",
        "--deselect", "tests/test_error_estimate.py::"
        "test_accuracy_target_refines_until_met_or_says_it_could_not",
    ],
    "femcav/study": [
        "tests/test_morph.py", "tests/test_sweep.py", "tests/test_tune.py",
        "tests/test_extract.py", "tests/test_study_hardening.py",
        "tests/test_mutation_survivors.py",
        # (signals a sweep's worker processes: not from inside mutmut's forked runners)
        "--deselect", "tests/test_study_hardening.py::"
        "test_killed_sweep_takes_its_workers_and_resumes",
        "--deselect", "tests/test_sweep.py::test_slab_thickness_sweep_against_the_slab_loaded_formula",
        "--deselect", "tests/test_morph.py::"
        "test_dr_puck_radius_derivative_agrees_with_the_axisymmetric_solver",
    ],
}

# mutmut's exit-code verdicts, folded into our four
KILLED, SURVIVED, TIMED_OUT, NOT_RUN = "killed", "survived", "timed out", "not run"
NO_TEST = 33                       # no selected test reaches the mutated function
TIMEOUT_CODES = {36, -24, 24, 152, 255}
NOT_RUN_CODES = {None, 2, 34, 37}  # not checked, interrupted, skipped, type check


def verdict(exit_code: int | None) -> str:
    if exit_code in NOT_RUN_CODES:
        return NOT_RUN
    if exit_code in TIMEOUT_CODES:
        return TIMED_OUT
    if exit_code in (0, 5, NO_TEST):
        return SURVIVED
    return KILLED                  # a failing test, a pytest error or a crash (segfault)


def wilson_interval(successes: int, trials: int, z: float = 1.959964) -> tuple[float, float]:
    """95 % score interval for a binomial proportion (Wilson 1927)."""
    if trials == 0:
        return 0.0, 1.0
    p = successes / trials
    centre = (p + z * z / (2 * trials)) / (1 + z * z / trials)
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / (1 + z * z / trials)
    return max(0.0, centre - half), min(1.0, centre + half)


@dataclass
class Mutant:
    name: str
    status: str
    exit_code: int | None
    file: str = ""
    line: int = 0
    diff: str = ""


@dataclass
class PackageScore:
    package: str
    population: int
    tried: int
    killed: int
    survived: int
    timed_out: int
    seconds: float
    mutants: list[Mutant] = field(default_factory=list)

    @property
    def detected(self) -> int:
        return self.killed + self.timed_out

    @property
    def score(self) -> float:
        return self.detected / self.tried if self.tried else float("nan")


def mutmut_command() -> list[str]:
    return [sys.executable, "-m", "mutmut"]


def missing_tests(selection: list[str]) -> list[str]:
    """Test files of a selection that do not exist (a renamed file must not drop silently)."""
    return [a for a in selection
            if a.startswith("tests/") and not (ROOT / a.split("::")[0]).exists()]


def set_timeout_factor(where: Path, factor: float) -> None:
    path = where / "pyproject.toml"
    path.write_text(re.sub(r"timeout_multiplier = [0-9.]+", f"timeout_multiplier = {factor}",
                           path.read_text()))


def scratch_copy(package: str, where: Path) -> None:
    """The package tree, the tests and a pyproject.toml with our mutmut settings."""
    for name in ("femcav", "tests"):
        shutil.copytree(ROOT / name, where / name,
                        ignore=shutil.ignore_patterns("__pycache__", "*-results"))
    selection = SELECTIONS[package]
    if missing_tests(selection):
        raise SystemExit(f"test selection of {package} names missing files: "
                         f"{missing_tests(selection)}")
    settings = "\n".join([
        "", "[tool.mutmut]",
        'source_paths = ["femcav"]',
        f'only_mutate = ["{package}/*"]',
        f"pytest_add_cli_args_test_selection = {json.dumps(selection)}",
        f"timeout_multiplier = {TIMEOUT_FACTOR}",
        "timeout_constant = 1.0",
        "use_git_change_detection = false",
        # Fork each mutant from a process that has imported the tests but run none: forked
        # from one that ran them (mutmut's default), it would inherit the lru_caches of the
        # reference elements filled by the unmutated code, and mutants there would survive.
        'process_isolation = "forkserver"',
        "",
    ])
    (where / "pyproject.toml").write_text((ROOT / "pyproject.toml").read_text() + settings)


# mutmut has no command that only writes the mutants; these are the first steps of its `run`
GENERATE = """
from mutmut.__main__ import (copy_src_dir, copy_also_copy_files, setup_source_paths,
                             store_lines_covered_by_tests, create_mutants)
from mutmut.mutation.trampoline import set_mutant_under_test
set_mutant_under_test("mutant_generation")
copy_src_dir(); copy_also_copy_files(); setup_source_paths(); store_lines_covered_by_tests()
create_mutants(1)
"""


def run_quietly(command: list[str], where: Path, env: dict, log: Path) -> int:
    with open(log, "ab") as sink:
        return subprocess.run(command, cwd=where, env=env, stdout=sink, stderr=sink).returncode


def exit_codes(where: Path, package: str) -> dict[str, int | None]:
    codes: dict[str, int | None] = {}
    for meta in sorted((where / "mutants" / package).rglob("*.py.meta")):
        codes.update(json.loads(meta.read_text())["exit_code_by_key"])
    return codes


def place_of(diff: str, package: str, mutant: str) -> tuple[str, int]:
    """File and line of the first changed line: the diff is of the function alone, so its hunk
    line is added to the line of the function's `def` in the original file."""
    module = mutant.split(".x")[0] if ".xǁ" in mutant else mutant.rsplit(".", 1)[0]
    path = module.replace(".", "/") + ".py"
    local = re.sub(r"__mutmut_\d+$", "", mutant[len(module) + 1:])
    owner, function = (local.split("ǁ")[1:3] if "ǁ" in local else ("", local[2:]))
    source = (ROOT / path).read_text().splitlines()
    first = next((i for i, text in enumerate(source) if text.startswith(f"class {owner}(")
                  or text.startswith(f"class {owner}:")), 0) if owner else 0
    start = next((i for i, text in enumerate(source[first:], first + 1)
                  if re.match(rf"\s*(async\s+)?def {re.escape(function)}\(", text)), 1)
    old_line = None
    for text in diff.splitlines():
        hunk = re.match(r"@@ -(\d+)", text)
        if hunk:
            old_line = int(hunk.group(1))
        elif old_line is not None and not text.startswith(("---", "+++")):
            if text.startswith("-"):
                return path, start + old_line - 1
            if not text.startswith("+"):
                old_line += 1
    return path, start


def show(name: str, where: Path, env: dict) -> str:
    """mutmut's diff of one mutant (of its function alone)."""
    shown = subprocess.run(mutmut_command() + ["show", name], cwd=where, env=env,
                           capture_output=True, text=True).stdout
    return "\n".join(line for line in shown.splitlines() if not line.startswith("# "))


def changed_lines(diff: str) -> list[str]:
    return [line for line in diff.splitlines()
            if line[:1] in "+-" and not line.startswith(("+++", "---"))]


def score_package(package: str, sample: int, seed: int, jobs: int, keep: Path | None,
                  log: Path, earlier: dict[str, Mutant] | None = None) -> PackageScore:
    """Score a seeded sample of the package's mutants; with ``earlier`` (the mutants of a
    previous run), run again only those that survived it: a test added since can only kill
    more, so the others keep their verdicts."""
    started = time.perf_counter()
    where = Path(tempfile.mkdtemp(prefix="femcav-mutation-")) if keep is None else keep
    if keep is not None and where.exists():
        shutil.rmtree(where)
    where.mkdir(parents=True, exist_ok=True)
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}  # import the mutants
    env.update({v: "1" for v in THREAD_VARIABLES})
    try:
        scratch_copy(package, where)
        if run_quietly([sys.executable, "-c", GENERATE], where, env, log):
            raise SystemExit(f"mutant generation failed for {package}; see {log}")
        population = sorted(exit_codes(where, package))
        if earlier is None:
            chosen = (sorted(random.Random(seed).sample(population, sample))
                      if 0 < sample < len(population) else population)
            again = chosen
        else:
            chosen = sorted(earlier)
            again = [n for n in chosen if earlier[n].status in (SURVIVED, NOT_RUN)]
            # mutmut numbers the mutants of a function in order, so a change to the source
            # can give a name another mutation: run a name again only if its change is the same
            for name in list(again):
                if changed_lines(show(name, where, env)) != changed_lines(earlier[name].diff):
                    print(f"  {name}: the source changed, not run again", file=sys.stderr)
                    again.remove(name)
                    earlier[name] = Mutant(name, NOT_RUN, None, diff="(source changed)")
        print(f"{package}: {len(population)} mutants, {len(chosen)} in the sample, running "
              f"{len(again)}", file=sys.stderr, flush=True)
        if again:
            run_quietly(mutmut_command() + ["run", "--max-children", str(jobs), *again],
                        where, env, log)
        codes = exit_codes(where, package)
        slow = [n for n in again if verdict(codes.get(n)) == TIMED_OUT]
        if slow:
            print(f"  {len(slow)} timed out: once more, alone, with {RETRY_FACTOR:g} times "
                  "the clean run", file=sys.stderr, flush=True)
            set_timeout_factor(where, RETRY_FACTOR)
            run_quietly(mutmut_command() + ["run", "--max-children", "1", *slow], where, env,
                        log)
            set_timeout_factor(where, TIMEOUT_FACTOR)
            codes = exit_codes(where, package)
        mutants = []
        for name in chosen:
            if name not in again:
                mutants.append(earlier[name])
                continue
            status = verdict(codes.get(name))
            mutant = Mutant(name, status, codes.get(name))
            if status == SURVIVED:
                mutant.diff = show(name, where, env)
                mutant.file, mutant.line = place_of(mutant.diff, package, name)
                if mutant.exit_code == NO_TEST:
                    mutant.diff = "(no selected test reaches this function)\n" + mutant.diff
            mutants.append(mutant)
    finally:
        if keep is None:
            shutil.rmtree(where, ignore_errors=True)
    tried = [m for m in mutants if m.status != NOT_RUN]
    return PackageScore(
        package=package, population=len(population), tried=len(tried),
        killed=sum(m.status == KILLED for m in tried),
        survived=sum(m.status == SURVIVED for m in tried),
        timed_out=sum(m.status == TIMED_OUT for m in tried),
        seconds=time.perf_counter() - started, mutants=mutants)


def table(scores: list[PackageScore]) -> str:
    lines = [f"{'package':14} {'mutants':>8} {'tried':>6} {'killed':>7} {'survived':>9} "
             f"{'timed out':>10} {'score':>7}  {'95 % interval':>15} {'time':>8}"]
    for s in scores:
        low, high = wilson_interval(s.detected, s.tried)
        lines.append(f"{s.package:14} {s.population:8d} {s.tried:6d} {s.killed:7d} "
                     f"{s.survived:9d} {s.timed_out:10d} {100 * s.score:6.1f}%  "
                     f"{100 * low:5.1f} - {100 * high:5.1f}% {s.seconds / 60:6.1f} min")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("packages", nargs="*", default=list(SELECTIONS),
                        help="package folders (default: %(default)s)")
    parser.add_argument("--sample", type=int, default=40,
                        help="random mutants per package; 0 for all (default %(default)s)")
    parser.add_argument("--seed", type=int, default=2025)
    parser.add_argument("--jobs", type=int, default=1, help="mutants run at once")
    parser.add_argument("--keep", type=Path, help="scratch folder to keep (one package)")
    parser.add_argument("--survivors-only", action="store_true",
                        help="run again only the survivors of the sample in "
                             "benchmarks/out/mutation.json (after adding tests)")
    args = parser.parse_args(argv)
    unknown = [p for p in args.packages if p.rstrip("/") not in SELECTIONS]
    if unknown:
        parser.error(f"no test selection for {unknown}; known: {list(SELECTIONS)}")
    earlier: dict[str, dict[str, Mutant]] = {}
    if args.survivors_only:
        previous = json.loads((OUT / "mutation.json").read_text())
        args.sample, args.seed = previous["sample"], previous["seed"]
        earlier = {p["package"]: {m["name"]: Mutant(**m) for m in p["mutants"]}
                   for p in previous["packages"]}
        args.packages = [p for p in args.packages if p.rstrip("/") in earlier]
        (OUT / "mutation_before.json").write_text(json.dumps(previous, indent=1,
                                                             ensure_ascii=False))
    OUT.mkdir(parents=True, exist_ok=True)
    log = OUT / "mutation.log"
    log.write_text("")
    scores = [score_package(p.rstrip("/"), args.sample, args.seed, args.jobs, args.keep, log,
                            earlier.get(p.rstrip("/")))
              for p in args.packages]
    text = table(scores)
    print(text)
    report = {
        "date": date.today().isoformat(), "tool": "mutmut", "sample": args.sample,
        "seed": args.seed, "timeout_factor": TIMEOUT_FACTOR, "retry_factor": RETRY_FACTOR,
        "packages": [{**{k: v for k, v in asdict(s).items() if k != "mutants"},
                      "score": s.score, "interval95": wilson_interval(s.detected, s.tried),
                      "selection": SELECTIONS[s.package],
                      "mutants": [asdict(m) for m in s.mutants]} for s in scores],
    }
    (OUT / "mutation.json").write_text(json.dumps(report, indent=1, ensure_ascii=False))
    survivors = [f"{m.file}:{m.line}  {m.name}\n{m.diff}\n"
                 for s in scores for m in s.mutants if m.status == SURVIVED]
    (OUT / "mutation_survivors.txt").write_text(text + "\n\n" + "\n".join(survivors))
    print(f"survivors: {OUT / 'mutation_survivors.txt'} ({len(survivors)})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
