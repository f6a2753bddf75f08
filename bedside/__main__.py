"""``python -m bedside`` is the same as the ``bedside`` command."""

try:
    from bedside.cli import main
except KeyboardInterrupt:  # Ctrl-C while Python is still loading bedside itself
    raise SystemExit(130) from None

raise SystemExit(main())
