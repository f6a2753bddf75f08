"""Demo streams: synthetic EEG with scripted faults, publishing on LSL, replay of files.

* :mod:`bedside.sim.scenario` — ``load_scenario(name_or_path) -> Scenario`` from
  ``demo_streams/*.yaml`` (an invented ward), ``Scenario.active_faults(t_s)``.
* :mod:`bedside.sim.generator` — ``SignalGenerator(scenario).generate(start, n)``:
  (n, n_channels) in µV, deterministic by sample index.
* :mod:`bedside.sim.publish` — ``Publisher`` / ``run_in_background``: a pylsl outlet
  with full channel metadata, pushed in real time × speed from a thread.
* :mod:`bedside.sim.replay` — ``load_recording`` / ``replay_publisher`` for EDF/EDF+,
  BDF and XDF files.
* :mod:`bedside.sim.source` — ``SimulatedSource``: a scenario as an in-process Source.

Nothing here imports pylsl until a publisher starts, nor anything of the UI.
"""
