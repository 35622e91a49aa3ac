"""Start `drc` in a hostile process environment, then become it (exec).

Usage: python tests/hostile/launch.py [SETUP...] -- ARGS...   (ARGS after `python`)

SETUP directives, applied in order before the exec:
  close-stdout   close standard output (as `>&-` does)
  fsize=N        a file-size limit of N bytes (as `ulimit -f` does; SIGXFSZ ignored
                 the way the interpreter does it, so the write fails with EFBIG)
  rmcwd          delete the (empty) working folder
Done in a launcher rather than in a preexec_fn because the corpus runs its
cases from several threads, where preexec_fn is not safe.
"""

from __future__ import annotations

import os
import resource
import sys


def main(argv: list[str]) -> None:
    split = argv.index("--")
    for directive in argv[:split]:
        if directive == "close-stdout":
            os.close(1)
        elif directive.startswith("fsize="):
            limit = int(directive.partition("=")[2])
            resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
        elif directive == "rmcwd":
            os.rmdir(os.getcwd())
        else:
            raise SystemExit(f"launch.py: unknown directive {directive!r}")
    os.execv(sys.executable, [sys.executable, *argv[split + 1:]])


if __name__ == "__main__":
    main(sys.argv[1:])
