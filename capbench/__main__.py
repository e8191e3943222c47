"""``python -m capbench``: the command line (``capbench --help``)."""

from .cli import main

raise SystemExit(main())
