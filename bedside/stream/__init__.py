"""Reading the amplifier's LSL stream: discovery and pinning, chunks in µV, labels,
stream health, the ring buffer. Sample arrays are (n_samples, n_channels), in µV.

Modules (only :mod:`bedside.stream.lsl` imports pylsl, lazily):

* ``lsl`` — ``prepare_lsl(log_to=None)`` before any LSL use; pylsl errors translated.
* ``discovery`` — ``find_streams``, ``select_stream``, ``resolve_one``; ``StreamLook`` (a
  look that answers as streams reply, for the app's picker).
* ``reader`` — ``LslSource(identity, settings=None)`` (the Source protocol) and
  ``open_stream(name, source_id, host, wait_s)``; ``metadata`` reads a full info's
  channel, reference and acquisition description for it.
* ``labels`` / ``units`` / ``channels`` — metadata to :class:`ChannelInfo`.
* ``health`` — ``HealthTracker`` (rate, gaps, clock jumps, stale/lost, reconnects).
* ``ring`` — ``RingBuffer(capacity_samples, n_channels)``, the one buffer of recent
  samples; ``tee.KeepRecent`` keeps a stream's newest seconds in one (``check --clip``,
  the app's display copy).
* ``settings`` — ``StreamSettings`` from ``configs/stream.yaml``.
"""
