"""Coverage-guided fuzzing of the netlist reader (and the config loader) with atheris.

Not part of the default test run (the file name does not match test_*.py).
Usage, for a fixed budget:

    pip install atheris            # or: pip install -e '.[fuzz]'
    python tests/fuzz/fuzz_reader.py --target reader --seconds 300
    python tests/fuzz/fuzz_reader.py --target config --seconds 120

Each input is written to a scratch file and read through the file entry
point (decoding, includes, flattening; for `config` the TOML loader with the
library's vocabularies). Anything but a Netlist/Config or a located DrcError
is a crash: atheris stops and writes the input as crash-*; turn it into a
corpus case under tests/hostile/corpus/ and fix it. Seeds: the reader's
test corpus, the demo boards and the hostile corpus.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))


def _seeds(target: str) -> list[Path]:
    if target == "config":
        return sorted(REPO.glob("boards/**/drc.toml")) + sorted(
            REPO.glob("tests/hostile/corpus/*/drc.toml"))
    return (sorted(REPO.glob("tests/netlist/corpus/**/*.cir")) + sorted(REPO.glob("boards/**/*.cir"))
            + sorted(REPO.glob("tests/hostile/corpus/*/b.cir")))


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--target", choices=("reader", "config"), default="reader")
    parser.add_argument("--seconds", type=int, default=120, help="time budget")
    parser.add_argument("--max-len", type=int, default=4096)
    parser.add_argument("--corpus", help="working corpus folder (default: a temp folder seeded "
                                          "from the repository)")
    args, rest = parser.parse_known_args()

    import atheris

    with atheris.instrument_imports():
        import tomllib  # noqa: F401  (instrumented too: the config target's first stage)

        import drc.config  # noqa: F401  (imported lazily by the pipeline: instrument it here)
        import drc.units  # noqa: F401
        from drc.errors import DrcError
        from drc.netlist.reader import ReaderOptions, read_netlist
        from drc.pipeline import load_config_file

    scratch = Path(tempfile.mkdtemp(prefix="drc-fuzz-"))
    (scratch / "lib.inc").write_text(".lib fast\nR1 a b 1k\n.endl\n.subckt S a b\nR1 a b 1\n.ends\n")
    deck = scratch / ("drc.toml" if args.target == "config" else "deck.cir")
    options = ReaderOptions(max_elements=20_000, max_subckt_depth=10)
    counter = {"n": 0}

    def one(data: bytes) -> None:
        counter["n"] += 1
        deck.write_bytes(data)
        try:
            if args.target == "config":
                load_config_file(deck)
            else:
                read_netlist(deck, options=options)
        except DrcError as exc:
            if exc.location is None or not exc.location.file:
                raise AssertionError(f"unlocated error: {exc.message}") from None
            exc.render()

    corpus = Path(args.corpus) if args.corpus else scratch / "corpus"
    corpus.mkdir(parents=True, exist_ok=True)
    for i, seed in enumerate(_seeds(args.target)):
        data = seed.read_bytes()
        if len(data) <= args.max_len:
            (corpus / f"seed-{i}").write_bytes(data)
    argv = [sys.argv[0], str(corpus), f"-max_total_time={args.seconds}",
            f"-max_len={args.max_len}", f"-artifact_prefix={os.getcwd()}/crash-", *rest]
    atheris.Setup(argv, one)
    try:
        atheris.Fuzz()
    finally:
        print(f"fuzz_reader: {counter['n']} inputs tried", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
