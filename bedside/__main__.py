"""``python -m bedside`` is the same as the ``bedside`` command."""

from bedside.cli import main

raise SystemExit(main())
