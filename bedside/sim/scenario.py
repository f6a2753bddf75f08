"""Demo scenarios: an invented ward's beds, their channels and a timeline of scripted faults.

A scenario lives in ``demo_streams/<name>.yaml`` and is read strictly with
:mod:`bedside.config` (unknown keys are rejected with a suggestion; errors name the
file and the line). The people, ward and beds in those files are invented.

The fault list is deliberately plain so that tests and the checks engine can read
it as ground truth::

    faults:
      - {electrode: T7, kind: line_noise, start_s: 10, end_s: 70}
      - {electrode: [C3, CP1], kind: bridge, start_s: 0}      # a bridge names both
      - {electrode: REF, kind: reference, start_s: 120, end_s: 150}

``electrode`` is one channel label, or a list of exactly two labels for ``bridge`` and
``swap``. Two kinds are there for the tap test (``bedside taptest``), not for the
quality checks: ``tap`` is a technologist's touch on the electrode (a brief deflection,
one at ``start_s`` and one every ``interval_s`` while the fault is on, each peaking
``2·width_s`` after it is made), and ``swap`` puts two leads in each other's inputs
(the two channels' signals are exchanged, taps included)::

      - {electrode: Fp1, kind: tap, start_s: 3, end_s: 4}
      - {electrode: [Fp1, Fp2], kind: swap, start_s: 0}
Two pseudo-electrodes stand for the shared electrodes of the montage:

* ``REF`` — the common reference. Faults on it (``reference``, and ``line_noise``,
  ``drift``, ``pop``, ``tap``) reach every scalp channel with the same sign and phase,
  because each channel is recorded as electrode minus reference.
* ``GND`` — the ground / driven-right-leg. Only ``line_noise`` applies: a poor
  ground lets mains into every scalp channel, scaled by each electrode's impedance
  mismatch (Huhta & Webster 1973, IEEE TBME 20:91-101).

``end_s`` left out means "until the end of the scenario". Times are seconds from the
start of the scenario; a looping scenario repeats its timeline every ``duration_s``.

Why one module of about 400 lines: it is the scenario file format — its dataclasses
check themselves as they are read, so each rule a file must follow sits beside the
field it governs, and the loader is a few lines at the end.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

from bedside.config import from_mapping, read_yaml
from bedside.errors import ConfigError, ScenarioError

#: The demo_streams/ folder shipped with the project.
DEMO_DIR = Path(__file__).resolve().parent.parent.parent / "demo_streams"

#: The scenario ``bedside simulate`` and ``bedside demo`` use when none is named.
DEFAULT_SCENARIO = "ward_demo"

FaultKind = Literal[
    "line_noise", "flat", "drift", "bridge", "pop", "clipping", "muscle", "reference", "tap", "swap"
]
FAULT_KINDS: tuple[str, ...] = (
    "line_noise", "flat", "drift", "bridge", "pop", "clipping", "muscle", "reference", "tap", "swap",
)
#: Fault kinds that name two electrodes.
PAIR_KINDS = ("bridge", "swap")

#: Pseudo-electrodes: the common reference and the ground (see the module docstring).
REFERENCE = "REF"
GROUND = "GND"

# Which optional parameters each fault kind takes (anything else given is an error,
# so a misplaced parameter is never silently ignored).
_PARAMS: dict[str, tuple[str, ...]] = {
    "line_noise": ("amplitude_uv", "harmonics"),
    "flat": ("noise_uv",),
    "drift": ("amplitude_uv", "slope_uv_per_s", "offset_uv"),
    "bridge": ("residual_uv",),
    "pop": ("amplitude_uv", "interval_s", "tau_s"),
    "clipping": ("rail_uv", "offset_uv"),
    "muscle": ("amplitude_uv",),
    "reference": ("amplitude_uv", "drift_uv"),
    "tap": ("amplitude_uv", "interval_s", "width_s"),
    "swap": (),
}

#: Defaults of the optional fault parameters, per kind. Amplitudes are our own
#: choice of "clearly visible to a technologist" (common practice, not a standard).
FAULT_DEFAULTS: dict[str, dict[str, float]] = {
    # A loose electrode: tens of µV of mains, odd harmonics smaller.
    "line_noise": {"amplitude_uv": 40.0, "harmonics": 3},
    # A dead channel: amplifier noise only (IFCN 1998: < 1.5 µV p-p amplifier noise).
    "flat": {"noise_uv": 0.2},
    # A drying or moving electrode: slow wander plus a growing offset (ours: well beyond
    # the eye-movement wander of clean frontal leads in real EEG, at most 94 µV as the
    # SD of 0.25-s means in EEGMMIDB S001R02).
    "drift": {"amplitude_uv": 400.0, "slope_uv_per_s": 15.0, "offset_uv": 0.0},
    # A gel bridge: both electrodes see one signal; only a little independent noise.
    "bridge": {"residual_uv": 0.5},
    # Electrode pops: steps of a few hundred µV decaying over a fraction of a second.
    "pop": {"amplitude_uv": 300.0, "interval_s": 4.0, "tau_s": 0.4},
    # Saturation: a large offset drives the channel onto the amplifier's rail.
    "clipping": {"rail_uv": 3200.0, "offset_uv": 3200.0},
    # Muscle (EMG) contamination, µV RMS of > 20 Hz activity.
    "muscle": {"amplitude_uv": 40.0},
    # A loose reference: mains and slow drift in every channel.
    "reference": {"amplitude_uv": 30.0, "drift_uv": 120.0},
    # A technologist's touch on an electrode (the tap test): a brief deflection of a few
    # hundred µV for tens of ms (common practice); width_s is the full width at half
    # maximum. One tap at start_s, then one every interval_s while the fault is on.
    "tap": {"amplitude_uv": 300.0, "interval_s": 2.0, "width_s": 0.04},
    # Two leads in each other's inputs: the two channels' signals exchanged (no parameters).
    "swap": {},
}

# EDF's limit is 16 characters; spaces inside allow decorated labels ("EEG Fp1-REF").
_LABEL_RE = re.compile(r"^[A-Za-z](?:[A-Za-z0-9' _-]{0,14}[A-Za-z0-9'])?$")


@dataclass(frozen=True)
class Fault:
    """One scripted fault: ``kind`` on ``electrode`` from ``start_s`` to ``end_s`` (s).

    ``electrode`` is a label, ``REF``/``GND``, or two labels for a bridge or a swap. The optional
    parameters (all None = the kind's default in :data:`FAULT_DEFAULTS`) are only
    accepted for the kinds that use them.
    """

    electrode: str | tuple[str, ...]
    kind: FaultKind
    start_s: float = field(default=0.0, metadata={"min": 0})
    end_s: float | None = field(default=None, metadata={"min": 0})
    amplitude_uv: float | None = field(default=None, metadata={"min": 0, "max": 100000})
    harmonics: int | None = field(default=None, metadata={"min": 1, "max": 10})
    noise_uv: float | None = field(default=None, metadata={"min": 0, "max": 10})
    slope_uv_per_s: float | None = field(default=None, metadata={"min": -10000, "max": 10000})
    offset_uv: float | None = field(default=None, metadata={"min": -1000000, "max": 1000000})
    residual_uv: float | None = field(default=None, metadata={"min": 0, "max": 10})
    interval_s: float | None = field(default=None, metadata={"min": 0.1, "max": 3600})
    tau_s: float | None = field(default=None, metadata={"min": 0.001, "max": 60})
    rail_uv: float | None = field(default=None, metadata={"min": 1, "max": 1000000})
    drift_uv: float | None = field(default=None, metadata={"min": 0, "max": 100000})
    width_s: float | None = field(default=None, metadata={"min": 0.005, "max": 1.0})

    def __post_init__(self) -> None:
        names = self.electrodes
        if self.kind in PAIR_KINDS:
            if len(names) != 2 or names[0] == names[1]:
                raise ValueError(
                    f"a {self.kind} names two different electrodes, e.g. electrode: [C3, CP1]; got {list(names)}"
                )
        elif len(names) != 1:
            raise ValueError(
                f"a {self.kind} fault names one electrode (only a bridge or a swap names two); got {list(names)}"
            )
        if self.end_s is not None and self.end_s <= self.start_s:
            raise ValueError(f"end_s ({self.end_s}) must be after start_s ({self.start_s})")
        allowed = _PARAMS[self.kind]
        for f in dataclasses.fields(self):
            if f.name in ("electrode", "kind", "start_s", "end_s"):
                continue
            if getattr(self, f.name) is not None and f.name not in allowed:
                accepted = ", ".join(allowed) if allowed else "none"
                raise ValueError(
                    f"'{f.name}' does not apply to a {self.kind} fault (its parameters: {accepted})"
                )

    @property
    def electrodes(self) -> tuple[str, ...]:
        """The electrode(s) as a tuple: one name, or two for a bridge."""
        return (self.electrode,) if isinstance(self.electrode, str) else tuple(self.electrode)

    def param(self, name: str) -> float:
        """The value of an optional parameter, or the kind's default."""
        value = getattr(self, name)
        if value is None:
            return float(FAULT_DEFAULTS[self.kind][name])
        return float(value)

    def tap_peaks_s(self, duration_s: float) -> tuple[float, ...]:
        """A tap fault's taps: the scenario times (s) of their peaks. Tap k is made at
        start_s + k·interval_s and peaks 2·width_s later (so it rises from zero inside
        the fault); only taps whose whole pulse (peak ± 2·width_s) fits before the end."""
        if self.kind != "tap":
            return ()
        end = self.end_s if self.end_s is not None else duration_s
        interval, width = self.param("interval_s"), self.param("width_s")
        out: list[float] = []
        k = 0
        while True:
            peak = self.start_s + k * interval + 2 * width
            if peak + 2 * width > end:
                return tuple(out)
            out.append(peak)
            k += 1

    def active(self, t_s: float, duration_s: float) -> bool:
        """True if the fault is on at scenario time ``t_s`` (already folded into one loop)."""
        end = self.end_s if self.end_s is not None else duration_s
        return self.start_s <= t_s < end


@dataclass(frozen=True)
class Background:
    """The normal physiology under the faults (all amplitudes in µV).

    Amplitude sources: adult alpha mostly < 50 µV (IFSECN glossary); adult background
    10-100 µV (from memory); amplifier noise < 1.5 µV p-p (IFCN 1998, Nuwer et al.);
    blinks, ECG pickup and muscle amplitudes are from memory / common practice.
    """

    pink_uv: float = field(default=12.0, metadata={"min": 0, "max": 200})  # RMS per channel
    pink_exponent: float = field(default=1.0, metadata={"min": 0, "max": 3})  # PSD ~ 1/f^x
    # Share of each scalp electrode's background common with its neighbours (volume
    # conduction makes neighbouring electrodes correlated: common practice). 0.9: real
    # recordings' strongest correlation of a lead with another is about 0.95 in 0.5-30 Hz
    # (EEGMMIDB S001R02, MNE-Python's sample EEG); 0.9 gives 0.8-0.9 here, 0.5 gave 0.4-0.5.
    shared_fraction: float = field(default=0.9, metadata={"min": 0, "max": 0.95})
    reference_pink_uv: float = field(default=3.0, metadata={"min": 0, "max": 100})
    alpha_uv: float = field(default=20.0, metadata={"min": 0, "max": 200})  # peak, O1/O2
    alpha_hz: float = field(default=10.0, metadata={"min": 8, "max": 12})
    eyes_open_s: float = field(default=20.0, metadata={"min": 1, "max": 3600})
    eyes_closed_s: float = field(default=15.0, metadata={"min": 0, "max": 3600})
    blink_uv: float = field(default=150.0, metadata={"min": 0, "max": 1000})  # at Fp1/Fp2
    blinks_per_min: float = field(default=15.0, metadata={"min": 0, "max": 120})
    ecg_uv: float = field(default=4.0, metadata={"min": 0, "max": 100})  # pickup on scalp
    ecg_channel_uv: float = field(default=1000.0, metadata={"min": 0, "max": 10000})
    heart_rate_bpm: float = field(default=72.0, metadata={"min": 20, "max": 250})
    muscle_uv: float = field(default=20.0, metadata={"min": 0, "max": 200})  # RMS in bursts
    muscle_bursts_per_min: float = field(default=2.0, metadata={"min": 0, "max": 60})
    mains_uv: float = field(default=0.3, metadata={"min": 0, "max": 100})  # residual, all
    amplifier_noise_uv: float = field(default=0.25, metadata={"min": 0, "max": 10})  # RMS


@dataclass(frozen=True)
class Scenario:
    """One bed of the invented ward: what its amplifier sends and what goes wrong when.

    Samples made from it are (n_samples, n_channels) in µV (see
    :class:`bedside.sim.generator.SignalGenerator`); ``units`` only says in which unit
    the publisher sends them on LSL.
    """

    ward: str
    bed: str
    patient: str  # an invented pseudonym
    stream_name: str
    channels: tuple[str, ...]
    rate_hz: float = field(metadata={"min": 100, "max": 10000})
    duration_s: float = field(metadata={"min": 10, "max": 86400})
    seed: int = field(metadata={"min": 0})
    mains_hz: float = field(metadata={"choices": (50.0, 60.0)})
    name: str = ""
    note: str = ""
    units: str = field(
        default="microvolts",
        metadata={"choices": ("microvolts", "millivolts", "volts", "nanovolts")},
    )
    loop: bool = True
    cap: str = "invented 10-20 cap"
    cap_size: str = "56"
    labelscheme: str = "10-20"
    manufacturer: str = "bedside simulator"
    background: Background = field(default_factory=Background)
    faults: tuple[Fault, ...] = ()

    def __post_init__(self) -> None:
        if not self.channels:
            raise ValueError("channels: at least one channel label is needed")
        seen: set[str] = set()
        for label in self.channels:
            if not _LABEL_RE.match(label):
                raise ValueError(
                    f"channel label {label!r} is not usable: ASCII letters, digits, spaces, "
                    "'-' or '_', starting with a letter, at most 16 characters (EDF limit)"
                )
            if label.upper() in seen:
                raise ValueError(f"channel label {label!r} appears twice")
            if label.upper() in (REFERENCE, GROUND):
                raise ValueError(f"{label!r} is reserved for the reference/ground; rename the channel")
            seen.add(label.upper())
        scalp = set(self.scalp_channels)
        for i, fault in enumerate(self.faults):
            for name in fault.electrodes:
                if name == REFERENCE:
                    if fault.kind not in ("reference", "line_noise", "drift", "pop", "tap"):
                        raise ValueError(
                            f"faults[{i}]: a {fault.kind} fault cannot be on REF "
                            "(accepted on REF: reference, line_noise, drift, pop, tap)"
                        )
                elif name == GROUND:
                    if fault.kind != "line_noise":
                        raise ValueError(f"faults[{i}]: only line_noise applies to GND, not {fault.kind}")
                elif fault.kind == "reference":
                    raise ValueError(f"faults[{i}]: a reference fault is on electrode REF, not {name!r}")
                elif name not in self.channels:
                    raise ValueError(
                        f"faults[{i}]: electrode {name!r} is not one of the channels "
                        f"({', '.join(self.channels)}; or REF, GND)"
                    )
                elif fault.kind == "bridge" and name not in scalp:
                    raise ValueError(f"faults[{i}]: a bridge joins scalp electrodes; {name!r} is not one")
            if fault.start_s >= self.duration_s:
                raise ValueError(
                    f"faults[{i}]: start_s {fault.start_s} is not within the scenario "
                    f"(duration_s {self.duration_s})"
                )
            if fault.end_s is not None and fault.end_s > self.duration_s:
                raise ValueError(
                    f"faults[{i}]: end_s {fault.end_s} is after the end of the scenario "
                    f"(duration_s {self.duration_s})"
                )

    @property
    def n_channels(self) -> int:
        return len(self.channels)

    @property
    def channel_types(self) -> tuple[str, ...]:
        """LSL/BIDS channel type per channel: EEG, or ECG/EOG/EMG from the label."""
        return tuple(channel_type(label) for label in self.channels)

    @property
    def scalp_channels(self) -> tuple[str, ...]:
        return tuple(c for c, t in zip(self.channels, self.channel_types, strict=True) if t == "EEG")

    def fold_time(self, t_s: float) -> float:
        """Scenario time folded into one pass of the timeline (looping scenarios repeat)."""
        if self.loop and t_s >= self.duration_s:
            return t_s % self.duration_s
        return t_s

    def active_faults(self, t_s: float) -> tuple[Fault, ...]:
        """The faults that are on at ``t_s`` seconds from the start (looping folded in)."""
        t = self.fold_time(t_s)
        if not self.loop and t >= self.duration_s:
            return ()
        return tuple(f for f in self.faults if f.active(t, self.duration_s))

    def faulty_electrodes(self, t_s: float) -> frozenset[str]:
        """Channel labels with a fault of their own at ``t_s`` (REF/GND faults excluded)."""
        return frozenset(
            name
            for f in self.active_faults(t_s)
            for name in f.electrodes
            if name not in (REFERENCE, GROUND)
        )


    def affected_channels(self, t_s: float) -> frozenset[str]:
        """Channel labels whose signal a fault changes at ``t_s``: a fault's own
        electrodes, and every scalp channel while the reference or ground is at fault."""
        out = set(self.faulty_electrodes(t_s))
        if any(n in (REFERENCE, GROUND) for f in self.active_faults(t_s) for n in f.electrodes):
            out.update(self.scalp_channels)
        return frozenset(out)


def channel_type(label: str) -> str:
    """EEG unless the label says ECG/EKG, EOG, EMG (common practice for labels)."""
    up = label.upper()
    for prefix, kind in (("ECG", "ECG"), ("EKG", "ECG"), ("EOG", "EOG"), ("VEOG", "EOG"),
                         ("HEOG", "EOG"), ("EMG", "EMG")):
        if up.startswith(prefix):
            return kind
    return "EEG"


def list_scenarios(folder: Path | None = None) -> tuple[str, ...]:
    """Names of the scenarios in ``demo_streams/`` (file stems), sorted."""
    folder = folder or DEMO_DIR
    return tuple(sorted(p.stem for p in folder.glob("*.yaml")))


def resolve_scenario_path(path_or_name: str | Path) -> Path:
    """A scenario name in ``demo_streams/`` or a path to a YAML file → the file's path."""
    text = str(path_or_name)
    candidate = Path(text)
    if candidate.suffix in (".yaml", ".yml") or "/" in text or candidate.exists():
        if not candidate.is_file():
            if candidate.is_dir():
                raise ScenarioError(f"{text} is a folder; give a scenario .yaml file or a name ({', '.join(list_scenarios())})")
            if candidate.exists():
                raise ScenarioError(f"{text} is not a regular file; give a scenario .yaml file")
            raise ScenarioError(f"scenario file {text} not found")
        return candidate
    path = DEMO_DIR / f"{text}.yaml"
    if not path.is_file():
        known = ", ".join(list_scenarios()) or "(none found)"
        raise ScenarioError(
            f"no scenario named {text!r}; the scenarios are: {known} (or give a path to a .yaml file)"
        )
    return path


def load_scenario(path_or_name: str | Path = DEFAULT_SCENARIO) -> Scenario:
    """Read a scenario by name (``demo_streams/<name>.yaml``) or path, strictly.

    Raises :class:`~bedside.errors.ScenarioError` when the name is unknown and
    :class:`~bedside.errors.ConfigError` (file and line named) when the file is wrong.
    """
    path = resolve_scenario_path(path_or_name)
    data = read_yaml(path)
    if not isinstance(data, dict):
        raise ConfigError(f"{path}: a scenario is a mapping of settings (ward, bed, channels, ...)")
    scenario = from_mapping(data, Scenario, source=str(path))
    if not scenario.name:
        scenario = dataclasses.replace(scenario, name=path.stem)
    return scenario
