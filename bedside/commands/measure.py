"""``bedside measure``: every 10-20 / 10-10 marking distance from three tape measurements.

Output formats: ``table`` (default: the marking sheet, :mod:`bedside.placement.sheet`,
the same the app saves with F5; grouped by measuring line in walking order),
``json`` (one object: measurements, system, names, marks, positions_mm, neighbours,
model) and ``csv`` (one row per mark). ``--bids-dir DIR`` also writes BIDS
``electrodes.tsv`` and ``coordsystem.json`` into DIR. Bad input: ``error: ...``, exit 2.
"""

from __future__ import annotations

import argparse
import csv
import io
import sys
from pathlib import Path

from bedside.cautions import CAUTIONS
from bedside.errors import InputError
from bedside.placement import systems
from bedside.placement.bids import write_coordsystem_json, write_electrodes_tsv
from bedside.placement.calculator import plan_placement
from bedside.placement.model import HeadModel
from bedside.placement.sheet import as_taped, marking_sheet
from bedside.placement.types import Mark, PlacementPlan
from bedside.placement.validate import UNITS, parse_inferior_circumference, parse_measurements
from bedside.record.plain import json_text

NAME = "measure"
ORDER = 10
FORMATS = ("table", "json", "csv")

_EXAMPLE = "example: bedside measure --nasion-inion 36 --preauricular 35 --circumference 56"
_FIELDS = (
    "name", "other_name", "line", "start", "distance_cm", "step_cm", "percent",
    "xyz_mm", "how", "arc_cm", "rule", "rule_gap_cm",
)  # fmt: skip


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = sub.add_parser(
        NAME,
        help="marking distances for every 10-20 / 10-10 site from three tape measurements",
        description=(
            "Turn three tape measurements into every marking distance of the 10-20 or "
            "10-10 system, line by line in the order you walk the head, with the 3-D "
            "position of each site on a head model fitted to the measurements. "
            "Distances on the measured lines follow the published percentages exactly; "
            "sites between marks (F3, P3, 10-10 rows) come with how to find them."
        ),
        epilog=_EXAMPLE + "\n\n" + CAUTIONS,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    req = p.add_argument_group("the three measurements (over the vertex; in --unit)")
    req.add_argument(
        "--nasion-inion",
        metavar="LEN",
        required=True,
        help="nasion to inion, over the vertex",
    )
    req.add_argument(
        "--preauricular",
        metavar="LEN",
        required=True,
        help="left to right preauricular point, over the vertex",
    )
    req.add_argument(
        "--circumference",
        metavar="LEN",
        required=True,
        help="round the head through Fpz, T3/T7, Oz, T4/T8 (the 10 %% level)",
    )
    p.add_argument(
        "--inferior-circumference",
        metavar="LEN",
        help=(
            "optional, 10-10: round the head through the nasion, both preauricular points "
            "and the inion; the inferior row (F9 … P10) is then marked from your tape "
            "instead of the model's estimate"
        ),
    )
    p.add_argument("--system", choices=systems.SYSTEMS, default="10-20", help="default 10-20")
    p.add_argument(
        "--names",
        choices=systems.NAMINGS,
        default="modern",
        help="modern (T7, T8, P7, P8; default) or classic (T3, T4, T5, T6)",
    )
    p.add_argument(
        "--unit", choices=tuple(UNITS), default="cm", help="unit of the measurements (default cm)"
    )
    p.add_argument("--format", choices=FORMATS, default="table", help="table (default), json, csv")
    p.add_argument(
        "--bids-dir",
        metavar="DIR",
        help="also write BIDS electrodes.tsv and coordsystem.json into DIR",
    )
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    measurements = parse_measurements(
        args.nasion_inion, args.preauricular, args.circumference, unit=args.unit
    )
    inferior = None
    if args.inferior_circumference is not None:
        inferior = parse_inferior_circumference(
            args.inferior_circumference, measurements, unit=args.unit
        )
        if args.system != "10-10":
            print(
                f"note: --inferior-circumference ({inferior:.1f} cm) is used by --system 10-10 "
                f"(its inferior row F9 … P10); {args.system} has no site on that line",
                file=sys.stderr,
            )
    plan = plan_placement(
        measurements, system=args.system, names=args.names, inferior_circumference_cm=inferior
    )
    if args.format == "json":
        out = json_text(plan_to_dict(plan, args.unit))
    elif args.format == "csv":
        out = plan_to_csv(plan)
    else:
        out = marking_sheet(plan, args.unit, as_taped(measurements, args.unit))
    if args.bids_dir is not None:
        written = write_bids(plan, Path(args.bids_dir))
        print("wrote " + " and ".join(str(p) for p in written), file=sys.stderr)
    sys.stdout.write(out if out.endswith("\n") else out + "\n")
    return 0


def mark_to_dict(mark: Mark) -> dict[str, object]:
    return {
        "name": mark.name,
        "other_name": mark.other_name,
        "line": mark.line,
        "start": mark.start,
        "distance_cm": mark.distance_cm,
        "step_cm": mark.step_cm,
        "percent": mark.percent,
        "xyz_mm": list(mark.xyz_mm),
        "how": mark.how,
        "arc_cm": mark.arc_cm,
        "rule": mark.rule,
        "rule_gap_cm": mark.rule_gap_cm,
    }


def plan_to_dict(plan: PlacementPlan, unit: str = "cm") -> dict[str, object]:
    """The JSON document of ``bedside measure --format json``."""
    m = plan.measurements
    doc: dict[str, object] = {
        "measurements": {
            "nasion_inion_cm": round(m.nasion_inion_cm, 2),
            "preauricular_cm": round(m.preauricular_cm, 2),
            "circumference_cm": round(m.circumference_cm, 2),
            "inferior_circumference_cm": (
                None
                if plan.inferior_circumference_cm is None
                else round(plan.inferior_circumference_cm, 2)
            ),
            "unit_given": unit,
        },
        "system": plan.system,
        "names": plan.names,
        "frame": "mm; origin midway between the preauricular points, +x right, +y nasion, +z up",
        "marks": [mark_to_dict(k) for k in plan.marks],
        "positions_mm": {k: list(v) for k, v in plan.positions_mm.items()},
        "neighbours": [list(p) for p in plan.neighbours],
    }
    if isinstance(plan.model, HeadModel):
        doc["model"] = {
            "shape": "ellipsoid",
            "half_axes_mm": [round(v, 1) for v in plan.model.axes_mm],
        }
    return doc


def plan_to_csv(plan: PlacementPlan) -> str:
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    header = [f for f in _FIELDS if f != "xyz_mm"]
    header[header.index("percent") + 1 : header.index("percent") + 1] = ["x_mm", "y_mm", "z_mm"]
    writer.writerow(header)
    for k in plan.marks:
        d = mark_to_dict(k)
        row: list[object] = []
        for f in header:
            if f in ("x_mm", "y_mm", "z_mm"):
                row.append(k.xyz_mm["xyz".index(f[0])])
            else:
                v = d[f]
                row.append("" if v is None else v)
        writer.writerow(row)
    return buf.getvalue()


def write_bids(plan: PlacementPlan, folder: Path) -> tuple[Path, Path]:
    """electrodes.tsv and coordsystem.json for the plan's positions, in ``folder``."""
    if folder.exists() and not folder.is_dir():
        raise InputError(f"--bids-dir {folder} is a file, not a folder; give a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(
            f"--bids-dir {folder} cannot be created ({exc.strerror or exc}); give a writable folder"
        ) from exc
    landmarks = None
    if isinstance(plan.model, HeadModel):
        a, b, _ = plan.model.axes_mm
        landmarks = {"NAS": (0.0, b, 0.0), "LPA": (-a, 0.0, 0.0), "RPA": (a, 0.0, 0.0)}
    tsv = write_electrodes_tsv(folder / "electrodes.tsv", plan.positions_mm)
    js = write_coordsystem_json(folder / "coordsystem.json", landmarks_mm=landmarks)
    return tsv, js
