"""``python -m clockplan`` runs the command line."""

from clockplan.cli import main

raise SystemExit(main())
