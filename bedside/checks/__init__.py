"""Live signal-quality checks: one module per check, the engine, the monitor thread.

Sample arrays are (n_samples, n_channels) in µV. Entry points:
:class:`bedside.checks.engine.Engine` (push new samples, evaluate a frame),
:class:`bedside.checks.monitor.Monitor` (source → engine → frames on a thread),
:func:`bedside.checks.settings.load_quality` (configs/quality.yaml).
"""
