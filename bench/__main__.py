"""``python -m bench``: every benchmark, one table (see bench/run.py)."""

from bench.run import main

raise SystemExit(main())
