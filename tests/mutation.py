"""Mutation testing of the core with mutmut: how many small bugs the tests catch.

Why a script: mutmut reads one `[tool.mutmut]` table from the pyproject.toml
of the folder it runs in, while each core package has its own fast tests.
So each package is run in a scratch copy of the repository (`.mutation/PKG/`,
git-ignored) whose pyproject.toml says which files to mutate and which tests
to run, and the copy is kept between runs so mutmut reuses its results for
unchanged code. Mutants of one function run only the tests that call it
(mutmut's own selection), one child process unless told otherwise; the
ngspice transient decks of tests/oracle and the tests marked slow are left
out (the physics they check is held by the closed-form and Monte Carlo
tests that do run); the quick ngspice readings inside the packages' own
test folders (one operating point each) stay in.

    python3 tests/mutation.py                  # every package, one child
    python3 tests/mutation.py gate checks      # some packages
    python3 tests/mutation.py --fresh design   # drop the kept copy and results first
    python3 tests/mutation.py --summary        # counts of the last runs, no run
    python3 tests/mutation.py --sample 600 analysis   # a seeded random sample of its mutants
    python3 tests/mutation.py --survivors gate # run again what survived (after new tests)
    python3 tests/mutation.py --names FILE design      # run again exactly the mutants named in FILE
    python3 tests/mutation.py --summary --names FILE design   # their counts only

`--names FILE`: one mutant a line, as mutmut names it (`drc.design.complete.x__cost__mutmut_4`)
or without the package's module prefix as docs/mutation.md prints it (`complete.x__cost__mutmut_4`);
blank lines and `#` comments are skipped. The mutants are generated first, every name must
be one of them, and each named one is run even if it has a result (the tests are mapped
anew, as with `--survivors`). With `--summary` or `--markdown` the counts are those of the
named mutants only.

Prints killed/total per package and the surviving mutants (`mutmut show
NAME` in the package's folder shows the change). docs/mutation.md lists the
survivors of the last full run and why each is equivalent or harmless.
"""

from __future__ import annotations

import argparse
import ast
import json
import os
import random
import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
WORK = ROOT / ".mutation"
COPIED = ("drc", "tests", "rules", "grammars", "boards", "docs", "benchmarks", "README.md", "DEVELOPERS.md")
PYTEST_ARGS = ["-p", "no:cacheprovider", "-m", "not slow", "-W", "ignore::DeprecationWarning"]


@dataclass(frozen=True)
class Package:
    """What to mutate and which tests judge the mutants."""

    mutate: tuple[str, ...]
    tests: tuple[str, ...]
    skip: tuple[str, ...] = ()  # files not mutated: (file, reason)


PACKAGES: dict[str, Package] = {
    "gate": Package(("drc/gate/*",), ("tests/gate",)),
    "checks": Package(("drc/checks/*",), ("tests/checks", "tests/boards", "tests/gate/test_baseline.py",
                                          "tests/report/test_json_report.py"),
                      skip=("drc/checks/examples.py",)),  # example netlist text, read by test_examples
    "design": Package(("drc/design/*",), ("tests/design",)),
    "analysis": Package(("drc/analysis/*",), ("tests/analysis", "tests/boards")),
}
EXCLUDED_TESTS = ("tests/checks/test_rule_packs.py",)  # pip-installs packs: minutes per run, marked slow
# Lines not mutated: wording and formatting of messages, fix texts and errors. A mutant
# there changes what a person reads, never a figure, a verdict or a location (tests
# must not pin the tool's own wording). docs/mutation.md states each pattern's reason.
WORDING = (
    # a text variable given a string or f-string: message, fix, verdict words
    r"^\s*(message|fix|text|what|why|how|effect|when|verdict|cause|names|where|side|req|th|clamp"
    r"|rail_text|window|margin_text|spice_text|toward|what_text|how_text)\s*=\s*\(?\s*f?[\"']",
    # a text keyword argument given a string or f-string
    r"^\s*(message|fix|justification)=\s*\(?\s*f?[\"']",
    # a line holding only a string (the continuation of a message)
    r"^\s*f?[\"'].*[\"']\s*\)*\s*,?\s*$",
    # a helper returning prose (a string with a space in it)
    r"^\s*return\s+f?[\"'][^\"']*\s",
)

KILLED = {1, 3}
SEED = 13  # the sample is the same on every run, so results accumulate
STATUS = {0: "survived", 33: "no tests", 5: "no tests", 36: "timeout", 24: "timeout", -24: "timeout",
          152: "timeout", 255: "timeout", None: "not checked", 34: "skipped", 37: "type check"}


def pyproject(pkg: Package) -> str:
    base = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    args = PYTEST_ARGS + [f"--ignore={t}" for t in EXCLUDED_TESTS]
    return base + "\n[tool.mutmut]\n" + "\n".join([
        'source_paths = ["drc"]',
        f"only_mutate = {json.dumps(list(pkg.mutate))}",
        f"do_not_mutate = {json.dumps(list(pkg.skip))}",
        f"do_not_mutate_patterns = {json.dumps(list(WORDING))}",
        f"pytest_add_cli_args = {json.dumps(args)}",
        f"pytest_add_cli_args_test_selection = {json.dumps(list(pkg.tests))}",
        'also_copy = ["rules", "grammars", "boards", "docs", "benchmarks", "README.md", "DEVELOPERS.md"]',
        "timeout_multiplier = 3.0",
        "timeout_constant = 5.0",
    ]) + "\n"


def sync(src: Path, dst: Path) -> None:
    """Copy `src` over `dst`, rewriting only files whose bytes changed (mutmut keys on them)."""
    if src.is_file():
        if not dst.exists() or dst.read_bytes() != src.read_bytes():
            dst.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dst)
        return
    wanted = set()
    for path in src.rglob("*"):
        if "__pycache__" in path.parts or path.suffix == ".pyc":
            continue
        rel = path.relative_to(src)
        wanted.add(rel)
        if path.is_file():
            sync(path, dst / rel)
    if dst.exists():
        for path in sorted(dst.rglob("*"), reverse=True):
            rel = path.relative_to(dst)
            if rel not in wanted and "__pycache__" not in path.parts and path.is_file():
                path.unlink()


def prepare(name: str, fresh: bool) -> Path:
    folder = WORK / name
    if fresh and folder.exists():
        shutil.rmtree(folder)
    folder.mkdir(parents=True, exist_ok=True)
    for item in COPIED:
        sync(ROOT / item, folder / item)
    (folder / "pyproject.toml").write_text(pyproject(PACKAGES[name]), encoding="utf-8")
    return folder


# mutmut's own first step (copy, set the paths, write the mutants), without running anything.
GENERATE = """
from mutmut.__main__ import (copy_also_copy_files, copy_src_dir, create_mutants, set_mutant_under_test,
                             setup_source_paths)
import os
import random
os.makedirs("mutants", exist_ok=True)
set_mutant_under_test("mutant_generation")
copy_src_dir(); copy_also_copy_files(); setup_source_paths(); create_mutants(1)
"""


def results(name: str) -> dict[str, int | None]:
    """Every generated mutant of a package and its exit code (None: not run yet)."""
    out: dict[str, int | None] = {}
    for meta in sorted((WORK / name / "mutants").rglob("*.py.meta")):
        out.update(json.loads(meta.read_text(encoding="utf-8")).get("exit_code_by_key", {}))
    return out


def chosen(name: str, folder: Path, env: dict, sample: int | None, survivors: bool,
           named: list[str] | None = None) -> list[str]:
    """The mutants to run: a seeded sample of those not run yet, those that survived, or the named ones."""
    subprocess.run([sys.executable, "-c", GENERATE], cwd=folder, env=env, check=True, capture_output=True)
    codes = results(name)
    if named is not None:
        (folder / "mutants" / "mutmut-stats.json").unlink(missing_ok=True)  # tests may be new: map them again
        return resolve(named, codes)
    if survivors:
        (folder / "mutants" / "mutmut-stats.json").unlink(missing_ok=True)  # new tests: map them again
        names = [m for m, code in codes.items() if code is not None and code not in KILLED]
        if sample:
            names = [m for m in names if m in set(sampled(codes, sample))]
        return names
    return [m for m in sampled(codes, sample or len(codes)) if codes[m] is None]


def read_names(path: str) -> list[str]:
    """The mutant names of a `--names` file: one a line, `#` comments and blank lines skipped."""
    lines = Path(path).read_text(encoding="utf-8").splitlines()
    return [t for t in (line.split("#", 1)[0].strip().strip("`") for line in lines) if t]


def resolve(named: list[str], codes: dict[str, int | None]) -> list[str]:
    """Full mutmut names of `named` (full, or without the module prefix); SystemExit on an unknown one."""
    by_short: dict[str, list[str]] = {}
    for m in codes:
        by_short.setdefault(m.split(".", 2)[-1], []).append(m)
    out, unknown = [], []
    for n in named:
        found = [n] if n in codes else by_short.get(n, [])
        if len(found) != 1:
            unknown.append(n)
        else:
            out.append(found[0])
    if unknown:
        raise SystemExit(f"not generated (or ambiguous): {', '.join(unknown[:10])}"
                         + (f" and {len(unknown) - 10} more" if len(unknown) > 10 else ""))
    return sorted(set(out))


def sampled(codes: dict[str, int | None], n: int) -> list[str]:
    return sorted(random.Random(SEED).sample(sorted(codes), min(n, len(codes))))


def run(name: str, children: int, fresh: bool, sample: int | None = None, survivors: bool = False,
        named: list[str] | None = None) -> int:
    folder = prepare(name, fresh)
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "MUTANT_UNDER_TEST")}
    cmd = [shutil.which("mutmut") or "mutmut", "run", "--max-children", str(children)]
    print(f"== {name}: {' '.join(cmd)} (in {folder.relative_to(ROOT)})", flush=True)
    if sample or survivors or named is not None:
        names = chosen(name, folder, env, sample, survivors, named)
        print(f"   {len(names)} mutants to run", flush=True)
        if not names:
            return 0
        cmd += names
    return subprocess.run(cmd, cwd=folder, env=env).returncode


def counts(name: str, sample: int | None = None, named: list[str] | None = None
           ) -> tuple[int, int, dict[str, list[str]]]:
    """(killed, run, {status: mutant names}) over the mutants run so far (of the sample and the
    named ones, if given)."""
    killed, total, other = 0, 0, {}
    codes = results(name)
    keep = set(sampled(codes, sample)) if sample else set(codes)
    if named is not None:
        keep &= set(resolve(named, codes))
    for mutant, code in codes.items():
        if code is None or mutant not in keep:
            continue
        total += 1
        if code in KILLED:
            killed += 1
        else:
            other.setdefault(STATUS.get(code, f"exit {code}"), []).append(mutant)
    return killed, total, other


_BODIES: dict[Path, dict[str, list[str]]] = {}


def _bodies(path: Path) -> dict[str, list[str]]:
    """Function name -> its body's lines, for every function of a mutated file (read once)."""
    if path not in _BODIES:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        _BODIES[path] = {node.name: ast.unparse(node).splitlines()[1:] for node in ast.walk(tree)
                         if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef) and "__mutmut_" in node.name}
    return _BODIES[path]


def mutant_diff(name: str, package: str) -> str:
    """The changed line of a mutant, "old -> new", read from mutmut's mutated source."""
    module, func = name.rsplit(".", 1)
    path = WORK / package / "mutants" / (module.replace(".", "/") + ".py")
    if not path.exists():
        path = path.with_suffix("") / "__init__.py"
    bodies = _bodies(path)
    old, new = bodies.get(func.rsplit("__mutmut_", 1)[0] + "__mutmut_orig", []), bodies.get(func, [])
    changed = [(a, b) for a, b in zip(old, new, strict=False) if a != b]
    if not changed and len(old) != len(new):
        return "(a line removed)"
    return "; ".join(f"`{a.strip()}` → `{b.strip()}`" for a, b in changed[:2]).replace("|", "\\|")


def markdown(names: list[str], sample: int | None = None, named: list[str] | None = None) -> None:
    """The survivors of the last runs as markdown rows: package | mutant | change."""
    print("| package | mutant | status | change |\n|---|---|---|---|")
    for name in names:
        _k, _t, other = counts(name, sample, named)
        for status, mutants in sorted(other.items()):
            for m in mutants:
                print(f"| {name} | `{m.split('.', 2)[-1]}` | {status} | {mutant_diff(m, name)} |")


def summary(names: list[str], sample: int | None = None, named: list[str] | None = None) -> None:
    all_k = all_t = 0
    for name in names:
        k, t, other = counts(name, sample, named)
        all_k, all_t = all_k + k, all_t + t
        share = f"{100 * k / t:.1f} %" if t else "-"
        of = f"a sample of {sample} of" if sample else "of"
        of = f"of {len(named)} named, of" if named is not None else of
        print(f"{name:9s} killed {k}/{t} ({share}) {of} {len(results(name))} generated")
        for status, mutants in sorted(other.items()):
            for m in mutants:
                print(f"    {status}: {m}")
    if all_t:
        print(f"all       killed {all_k}/{all_t} ({100 * all_k / all_t:.1f} %)")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("packages", nargs="*", help=f"of {', '.join(PACKAGES)} (default: all)")
    ap.add_argument("--max-children", type=int, default=1)
    ap.add_argument("--fresh", action="store_true", help="drop the kept copy and its results first")
    ap.add_argument("--summary", action="store_true", help="print the counts of the last runs only")
    ap.add_argument("--markdown", action="store_true", help="print the survivors as markdown rows, no run")
    ap.add_argument("--sample", type=int, help=f"run a random sample of this many mutants (seed {SEED})")
    ap.add_argument("--survivors", action="store_true", help="run again the mutants that were not killed")
    ap.add_argument("--names", metavar="FILE", help="run exactly the mutants named in FILE (one a line)")
    opts = ap.parse_args(argv)
    names = opts.packages or list(PACKAGES)
    unknown = [n for n in names if n not in PACKAGES]
    if unknown:
        ap.error(f"unknown package {', '.join(unknown)}; choose from {', '.join(PACKAGES)}")
    named = read_names(opts.names) if opts.names else None
    if named is not None and len(names) != 1:
        ap.error("--names goes with one package")
    if opts.markdown:
        markdown(names, opts.sample, named)
        return 0
    status = 0
    if not opts.summary:
        for name in names:
            status |= run(name, opts.max_children, opts.fresh, opts.sample, opts.survivors, named)
    summary(names, opts.sample, named)
    return status


if __name__ == "__main__":
    sys.exit(main())
