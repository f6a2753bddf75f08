"""One module per ``bedside`` sub-command (see ``bedside.cli``)."""
