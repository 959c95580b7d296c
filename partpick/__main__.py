"""``python -m partpick`` runs the command line."""

from partpick.cli import main

raise SystemExit(main())
