"""Plain words for the checks' metrics: one table for every place that shows them.

A metric's key (``mains_uv``, ``corr_98_lowest`` …) is a machine name with its unit in
it; people read :data:`METRIC_LABELS` instead: a label in words, the unit, the scale from
the stored value to the shown one (a fraction shown in %), a short column head for narrow
screens (the app's Watch table, ``bedside check``'s table), the group it belongs to, and
whether the printable report shows it. The report leaves out what only explains a verdict
to a developer (robust z-scores, a second view of the same amplitude); the setup log file
keeps every value.

Core module: the UI and the commands import it; it imports neither.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class MetricLabel:
    label: str  # in words, for a reader away from the bedside
    unit: str  # shown after the value ("" for a count or a correlation)
    short: str  # column head on a narrow screen
    group: str  # what the value is about (one of GROUPS)
    scale: float = 1.0  # stored value × scale = shown value
    report: bool = True  # shown in the printable report

    def heading(self) -> str:
        """'Mains interference (µV)': the label with its unit, for a table head."""
        return f"{self.label} ({self.unit})" if self.unit else self.label

    def format(self, value: float | None) -> str:
        """The value as shown under its heading (the unit is in the heading); "—" when
        there is none."""
        if value is None or value != value:  # missing or NaN
            return "—"
        shown = value * self.scale
        if self.unit == "r":
            return f"{shown:.2f}"
        if self.unit == "":
            return f"{shown:g}"
        return f"{shown:.0f}" if abs(shown) >= 100 else f"{shown:.1f}"


#: The groups, in the order the report shows them.
GROUPS = ("Signal size", "Mains", "Drift and offset", "Bridging", "Artifacts", "Shared EEG", "Samples")

METRIC_LABELS: dict[str, MetricLabel] = {
    # flat
    "ptp_uv": MetricLabel("Peak-to-peak amplitude", "µV", "p-p µV", "Signal size"),
    "recent_ptp_uv": MetricLabel("Peak-to-peak amplitude, newest second", "µV", "p-p now µV", "Signal size", report=False),
    "zero_diff_fraction": MetricLabel("Samples unchanged from the one before", "%", "same %", "Signal size", 100.0, report=False),
    # amplitude (also given by flat)
    "rms_uv": MetricLabel("RMS amplitude", "µV", "rms µV", "Signal size"),
    "amplitude_z": MetricLabel("Amplitude against the other leads (robust z)", "", "amp z", "Signal size", report=False),
    # line noise
    "mains_uv": MetricLabel("Mains interference", "µV", "mains µV", "Mains"),
    "line_noise_db": MetricLabel("Mains against the EEG band", "dB", "mains dB", "Mains"),
    "mains_peak_db": MetricLabel("Mains peak above its surroundings", "dB", "peak dB", "Mains", report=False),
    "mains_vs_median": MetricLabel("Mains against the median lead", "×", "vs median", "Mains", report=False),
    # drift
    "drift_uv_per_s": MetricLabel("Drift", "µV/s", "drift µV/s", "Drift and offset"),
    "slow_uv": MetricLabel("Slow wander", "µV", "wander µV", "Drift and offset"),
    "offset_uv": MetricLabel("DC offset", "µV", "offset µV", "Drift and offset", report=False),
    "offset_fraction": MetricLabel("DC offset against the amplifier's range", "%", "offset %", "Drift and offset", 100.0),
    # bridging
    "bridge_corr": MetricLabel("Highest correlation with a neighbour", "r", "bridge r", "Bridging"),
    "bridge_ed_uv2": MetricLabel("Smallest electrical distance to a neighbour", "µV²", "ED µV²", "Bridging", report=False),
    # artifacts
    "pops": MetricLabel("Electrode pops in the window", "", "pops", "Artifacts"),
    "step_max_uv": MetricLabel("Largest sudden jump", "µV", "jump µV", "Artifacts", report=False),
    "clip_fraction": MetricLabel("Clipped samples", "%", "clip %", "Artifacts", 100.0),
    "muscle_uv": MetricLabel("Muscle activity", "µV", "muscle µV", "Artifacts"),
    "muscle_ratio": MetricLabel("Muscle activity against the EEG band", "×", "muscle", "Artifacts", report=False),
    "muscle_z": MetricLabel("Muscle against the other leads (robust z)", "", "muscle z", "Artifacts", report=False),
    # correlation
    "corr_98": MetricLabel("Correlation with the other leads, newest second", "r", "corr r", "Shared EEG", report=False),
    "corr_98_lowest": MetricLabel("Lowest recent correlation with the other leads", "r", "corr low r", "Shared EEG"),
    # the engine's own
    "nonfinite_samples": MetricLabel("Missing or invalid samples", "", "invalid", "Samples"),
}


def metric_label(key: str) -> MetricLabel:
    """The label of ``key``; for a key the table lacks, words from the key itself
    ('foo_bar_uv' → 'foo bar', µV), kept out of the report."""
    known = METRIC_LABELS.get(key)
    if known is not None:
        return known
    for suffix, unit in (("_uv_per_s", "µV/s"), ("_uv2", "µV²"), ("_uv", "µV"), ("_db", "dB"),
                         ("_hz", "Hz"), ("_fraction", "%"), ("_s", "s"), ("_kohm", "kΩ")):
        if key.endswith(suffix):
            words = key[: -len(suffix)].replace("_", " ")
            scale = 100.0 if suffix == "_fraction" else 1.0
            return MetricLabel(words.capitalize(), unit, f"{words} {unit}", "Samples", scale, report=False)
    words = key.replace("_", " ")
    return MetricLabel(words.capitalize(), "", words, "Samples", report=False)


def short_header(key: str) -> str:
    """The narrow column head of ``key`` ('line_noise_db' → 'mains dB')."""
    return metric_label(key).short


def report_metrics(keys: object) -> list[str]:
    """Of ``keys``, the ones the printable report shows, grouped in GROUPS order."""
    present = [k for k in METRIC_LABELS if METRIC_LABELS[k].report and k in keys]  # type: ignore[operator]
    return sorted(present, key=lambda k: GROUPS.index(METRIC_LABELS[k].group))
