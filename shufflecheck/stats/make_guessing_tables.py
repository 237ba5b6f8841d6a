"""Recompute the stored guessing brackets (:mod:`shufflecheck.stats.guessing_tables`):

    python -m shufflecheck.stats.make_guessing_tables [PATH]

writes them to ``PATH`` (by default the package's own
``shufflecheck/stats/data/guessing-brackets.json`` in a source checkout), atomically,
with progress on standard error. About ten minutes of CPU and 2.5 GB of memory.
"""

from __future__ import annotations

import sys
from pathlib import Path

from shufflecheck.stats.guessing_tables import default_path, write_tables


def main(argv: list[str]) -> int:
    target = Path(argv[0]) if argv else default_path()
    target.parent.mkdir(parents=True, exist_ok=True)
    write_tables(target, progress=lambda line: print(line, file=sys.stderr, flush=True))
    print(target)
    return 0


if __name__ == "__main__":  # pragma: no cover - run by hand
    sys.exit(main(sys.argv[1:]))
