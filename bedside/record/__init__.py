"""The setup log: recording, autosave, and exports.

* :mod:`bedside.record.schema` — :class:`SetupLog` (the model) and its frozen records;
  :mod:`bedside.record.log` — its YAML form (``dump_yaml``/``load_log``; ``yaml.safe_load``
  semantics only) and the one import of the model's names; :mod:`bedside.record.journal`
  — the journal of an open session.
* :mod:`bedside.record.session` — :class:`SessionRecorder`: opens (:mod:`.resume`,
  :mod:`.files`, :mod:`.lockfile`), saves (:mod:`.saving`, :mod:`.autosave`) and closes;
  its recording methods are :mod:`.recording`'s, what a frame changes is decided by
  :mod:`.changes` (pure). :mod:`.worker` — one ordered worker thread for the app's calls.
* :mod:`bedside.record.time_to_good` — the one definition of time to good.
* :mod:`bedside.record.atomic` — the one atomic writer; :mod:`bedside.record.plain` —
  plain data and JSON text for every machine output.
* :mod:`bedside.record.html` — ``render_report(log)``: printable HTML with an SVG head map.
* :mod:`bedside.record.bids` — ``write_bids(log, out_dir)``: BIDS 1.11 sidecars.
* :mod:`bedside.record.edf_clip` — ``write_edf_clip(...)``: EDF+ clip with annotations.

No UI and no LSL here: the UI and ``bedside check`` drive these from their own threads.
"""
