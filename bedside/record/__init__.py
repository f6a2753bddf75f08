"""The setup log: recording, autosave, and exports.

* :mod:`bedside.record.log` — :class:`SetupLog` (the model), ``dump_yaml``/``load_log``
  (YAML is the canonical, re-loadable form; ``yaml.safe_load`` semantics only).
* :mod:`bedside.record.session` — :class:`SessionRecorder`: thread-safe recording of
  frames, impedances, notes and sign-off; atomic owner-only autosave every ≤ 2 s;
  resume; disk faults reported, kept in memory and retried.
* :mod:`bedside.record.html` — ``render_report(log)``: printable HTML with an SVG head map.
* :mod:`bedside.record.bids` — ``write_bids(log, out_dir)``: BIDS 1.11 sidecars.
* :mod:`bedside.record.edf_clip` — ``write_edf_clip(...)``: EDF+ clip with annotations.

No UI and no LSL here: the UI and ``bedside check`` drive these from their own threads.
"""
