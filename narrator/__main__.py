"""``python -m narrator`` runs the command line."""

from narrator.cli import main

raise SystemExit(main())
