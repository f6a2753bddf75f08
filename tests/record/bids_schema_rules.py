"""The BIDS standard's own machine-readable schema, applied to a folder bedside wrote.

Outside reference: the BIDS schema shipped by ``bidsschematools`` (the BIDS project's
package; its bundled ``schema.json`` is BIDS 1.11, schema 2.x), used offline:

* file names: ``bidsschematools.validator.validate_bids`` (the package's own validator,
  which checks names only: entities, suffix, extension, datatype folder);
* everything else comes from the schema's rules, read here and applied by a small
  evaluator of the schema's expression language (parsed by the package's own parser,
  ``bidsschematools.expressions.parse``): ``rules.sidecars`` and ``rules.json``
  (required/recommended fields, each value checked with ``jsonschema`` against the
  schema's own definition in ``objects.metadata``), ``rules.tabular_data`` (initial
  columns in order, required columns, additional columns, every value against
  ``objects.columns``/``objects.formats``, index columns unique) and ``rules.checks``
  (for example EEGChannelCount against the channels.tsv types).

The evaluator is ours, so it is itself checked against the schema's own
``meta.expression_tests`` (test_bids_schema.py). The package cannot validate sidecars
or columns by itself offline (its Python validator stops at file names), hence this.
Value rule from the specification's common principles, as the reference validator
applies it: ``n/a`` is accepted in any TSV cell (missing or not applicable).
"""

from __future__ import annotations

import csv
import functools
import json
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import jsonschema
from bidsschematools import expressions as bx
from bidsschematools import schema as bschema
from bidsschematools import validator as bvalidator

SCHEMA = bschema.load_schema()  # the bundled copy: offline
_SCHEMA_DICT = SCHEMA.to_dict()


class Unsupported(Exception):
    """The evaluator met a construct it does not implement (the test must say so)."""


# --- the expression language (BIDS schema, meta.expression_tests) -------------------


def _type(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int | float):
        return "number"
    if isinstance(value, str):
        return "string"
    if isinstance(value, list):
        return "array"
    if isinstance(value, dict):
        return "object"
    raise Unsupported(f"no BIDS type for {value!r}")


def _num_key(v: Any) -> tuple[int, float]:
    try:
        return (1, float(v))
    except (TypeError, ValueError):
        return (0, 0.0)


def _num_cmp(a: Any, b: Any) -> int:
    """Numeric order; a value that is not a number compares equal to everything (so it
    keeps its place), as the schema's expression tests expect of "n/a"."""
    (ka, va), (kb, vb) = _num_key(a), _num_key(b)
    if not (ka and kb):
        return 0
    return (va > vb) - (va < vb)


def _eq(a: Any, b: Any) -> bool:
    if isinstance(a, bool) != isinstance(b, bool):
        return False
    return bool(a == b)


class Evaluator:
    """Evaluates schema expressions over one context (a dict tree; missing → null)."""

    def __init__(self, context: dict[str, Any], exists: Any = None) -> None:
        self.context = context
        self._exists = exists

    def __call__(self, text: str) -> Any:
        return self.eval(bx.parse(text))

    def eval(self, node: Any) -> Any:
        if isinstance(node, bx.BinOp):
            return self._binop(node)
        if isinstance(node, bx.RightOp):
            value = self.eval(node.rh)
            if node.op == "!":
                return not value
            raise Unsupported(f"unary {node.op}")
        if isinstance(node, bx.Function):
            return self._call(node.name, [self.eval(a) for a in node.args])
        if isinstance(node, bx.Property):
            base = self.eval(node.name)
            return base.get(node.field) if isinstance(base, dict) else None
        if isinstance(node, bx.Element):
            base, index = self.eval(node.name), self.eval(node.index)
            if isinstance(base, list | str) and isinstance(index, int) and 0 <= index < len(base):
                return base[index]
            return None
        if isinstance(node, bx.Array):
            return [self.eval(e) for e in node.elements]
        if isinstance(node, bx.Object):
            return {}
        if isinstance(node, int | float):
            return node
        if isinstance(node, str):
            if len(node) >= 2 and node[0] == node[-1] and node[0] in "'\"":
                return node[1:-1]
            if node in ("true", "false"):
                return node == "true"
            if node == "null":
                return None
            return self.context.get(node)
        raise Unsupported(f"expression node {node!r}")

    def _binop(self, node: Any) -> Any:
        op = node.op
        if op == "&&":
            lh = self.eval(node.lh)
            if lh is False:
                return False
            rh = self.eval(node.rh)
            if lh is None or rh is None:
                return None
            return bool(lh) and bool(rh)
        if op == "||":
            lh = self.eval(node.lh)
            if lh is not None and lh:
                return True
            rh = self.eval(node.rh)
            if rh is not None and rh:
                return True
            return None if lh is None or rh is None else False
        lh, rh = self.eval(node.lh), self.eval(node.rh)
        if op == "==":
            return _eq(lh, rh)
        if op == "!=":
            return not _eq(lh, rh)
        if lh is None or rh is None:
            return None
        if op == "in":
            return lh in rh
        ops = {
            "<": lambda a, b: a < b, "<=": lambda a, b: a <= b,
            ">": lambda a, b: a > b, ">=": lambda a, b: a >= b,
            "+": lambda a, b: a + b, "-": lambda a, b: a - b,
            "*": lambda a, b: a * b, "/": lambda a, b: a / b,
            "%": lambda a, b: a % b, "**": lambda a, b: a**b,
        }  # fmt: skip
        if op not in ops:
            raise Unsupported(f"operator {op}")
        return ops[op](lh, rh)

    def _call(self, name: str, args: list[Any]) -> Any:
        if name == "type":
            return _type(args[0])
        if name == "intersects":
            a, b = args
            if not isinstance(a, list) or not isinstance(b, list):
                return False
            common = [x for x in a if x in b]
            return common or False
        if name == "allequal":
            a, b = args
            if not isinstance(a, list) or not isinstance(b, list):
                return False
            return len(a) == len(b) and all(_eq(x, y) for x, y in zip(a, b, strict=True))
        if name == "exists":
            if args[0] is None or args[1] is None:
                return 0
            if self._exists is None:
                raise Unsupported("exists() without a file tree")
            return self._exists(args[0], args[1], self.context)
        if name == "match":
            if args[0] is None:
                return None
            return args[1] is not None and re.search(args[1], args[0]) is not None
        if any(a is None for a in args):
            return None
        if name == "substr":
            return args[0][args[1] : args[2]]
        if name == "length":
            return len(args[0])
        if name == "count":
            return sum(1 for x in args[0] if _eq(x, args[1]))
        if name == "index":
            return args[0].index(args[1]) if args[1] in args[0] else None
        if name == "unique":
            out: list[Any] = []
            for x in args[0]:
                if not any(_eq(x, y) for y in out):
                    out.append(x)
            return out
        if name == "sorted":
            method = args[1] if len(args) > 1 else "auto"
            values = list(args[0])
            if method == "numeric" or (method == "auto" and all(_type(v) == "number" for v in values)):
                return sorted(values, key=functools.cmp_to_key(_num_cmp))
            return sorted(values, key=str)
        if name in ("min", "max"):
            values = args[0] if isinstance(args[0], list) else [args[0]]
            nums = [float(v) if isinstance(v, str) else v for v in values if _num_key(v)[0]]
            nums = [v for v in nums if not isinstance(v, bool)]
            if not nums:
                return None
            best = min(nums) if name == "min" else max(nums)
            return int(best) if float(best).is_integer() else best
        raise Unsupported(f"function {name}()")


# --- a folder bedside wrote, as the schema's contexts --------------------------------


@dataclass
class Finding:
    level: str  # "error" | "warning"
    path: str
    what: str

    def __str__(self) -> str:
        return f"{self.level}: {self.path}: {self.what}"


@dataclass
class Report:
    findings: list[Finding] = field(default_factory=list)
    rules_applied: set[str] = field(default_factory=set)

    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.level == "error"]

    def warnings(self) -> list[Finding]:
        return [f for f in self.findings if f.level == "warning"]


def _read_tsv(path: Path) -> tuple[list[str], dict[str, list[str]]]:
    with path.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh, delimiter="\t"))
    header, body = rows[0], rows[1:]
    return header, {h: [r[i] if i < len(r) else "" for r in body] for i, h in enumerate(header)}


def filename_matches(root: Path) -> tuple[list[str], list[dict[str, str]]]:
    """The package's own file-name validator: (unmatched paths, matches with entities)."""
    result = bvalidator.validate_bids([str(root)], schema_path=None)
    return list(result["path_tracking"]), list(result["match_listing"])


def _entities(name: str) -> dict[str, str]:
    by_short = {e.name: long for long, e in SCHEMA.objects.entities.items()}
    out = {}
    for part in name.split("_")[:-1]:
        key, _, value = part.partition("-")
        out[by_short.get(key, key)] = value
    return out


def contexts(root: Path, data_extension: str = ".edf") -> list[dict[str, Any]]:
    """One schema context per file under ``root``, plus one for the EEG data file that
    each ``_eeg.json`` describes (written by the acquisition system, not by bedside:
    its sidecar rules and checks are where the schema puts the _eeg.json fields)."""
    out: list[dict[str, Any]] = []
    files = sorted(p for p in root.rglob("*") if p.is_file())
    for p in files:
        rel = "/" + p.relative_to(root).as_posix()
        stem, dot, ext = p.name.partition(".")
        suffix = stem.rsplit("_", 1)[-1]
        ctx: dict[str, Any] = {
            "path": rel,
            "size": p.stat().st_size,
            "entities": _entities(stem),
            "datatype": p.parent.name if rel.count("/") > 1 else None,
            "suffix": suffix,
            "extension": dot + ext,
            "sidecar": {},
            "associations": {},
            "schema": _SCHEMA_DICT,
        }
        if ctx["datatype"] is not None:
            ctx["modality"] = next(
                (m for m, v in SCHEMA.rules.modalities.items() if ctx["datatype"] in v.datatypes), None
            )
        if p.suffix == ".json":
            ctx["json"] = json.loads(p.read_text(encoding="utf-8"))
        if p.suffix == ".tsv":
            header, columns = _read_tsv(p)
            ctx["columns"] = columns
            ctx["_header"] = header
        ctx["_file"] = p
        out.append(ctx)
    by_path = {c["path"]: c for c in out}
    for ctx in list(out):
        if ctx["suffix"] == "electrodes":
            coord = ctx["path"].replace("_electrodes.tsv", "_coordsystem.json")
            if coord in by_path:
                ctx["associations"]["coordsystem"] = {"path": coord}
        if ctx["suffix"] == "eeg" and ctx["extension"] == ".json":
            data = dict(ctx)
            data.pop("json")
            data["path"] = ctx["path"][: -len(".json")] + data_extension
            data["extension"] = data_extension
            data["sidecar"] = ctx["json"]
            data["_virtual"] = True
            channels = ctx["path"].replace("_eeg.json", "_channels.tsv")
            if channels in by_path:
                cols = by_path[channels]["columns"]
                data["associations"] = {"channels": {"path": channels, "type": cols.get("type")}}
            out.append(data)
    return out


def _dataset(root: Path) -> dict[str, Any]:
    subs = sorted(p.name for p in root.glob("sub-*") if p.is_dir())
    description = root / "dataset_description.json"
    return {
        "dataset_description": json.loads(description.read_text(encoding="utf-8"))
        if description.is_file()
        else {},
        "subjects": {"sub_dirs": subs},
        "modalities": [],
    }


def _exists_in(root: Path):
    def exists(paths: Any, scope: str, ctx: dict[str, Any]) -> int:
        items = paths if isinstance(paths, list) else [paths]
        n = 0
        for item in items:
            if scope == "dataset":
                n += (root / str(item).lstrip("/")).exists()
            elif scope == "file":
                n += (ctx["_file"].parent / str(item)).exists()
            elif scope == "subject":
                sub = ctx["path"].split("/")[1]
                n += (root / sub / str(item)).exists()
            elif scope == "bids-uri":
                pass  # bedside writes no BIDS URIs: none can resolve
            else:
                raise Unsupported(f"exists() scope {scope!r}")
        return n

    return exists


def _rules(group: str, marker: str) -> list[tuple[str, Any]]:
    """(dotted name, rule) for every rule of ``rules.<group>`` (rules nest to any depth;
    a rule is the mapping that carries ``marker``: fields, columns or checks)."""
    out: list[tuple[str, Any]] = []

    def walk(ns: Any, where: str) -> None:
        if marker in ns:
            out.append((where, ns))
            return
        for key, value in ns.items():
            if hasattr(value, "items"):
                walk(value, f"{where}.{key}")

    walk(SCHEMA.rules[group], group)
    return out


def _level(spec: Any) -> str:
    return spec if isinstance(spec, str) else spec.get("level", "optional")


def _selected(ev: Evaluator, rule: Any) -> bool:
    for sel in rule.get("selectors", []):
        value = ev(sel)
        if value is None or not value:
            return False
    return True


def _value_ok(definition: dict[str, Any], value: str) -> bool:
    """One TSV cell against a column definition (objects.columns), cells being text."""
    if value == "n/a":
        return True
    if "anyOf" in definition:
        return any(_value_ok(d, value) for d in definition["anyOf"])
    if "enum" in definition:
        return value in definition["enum"]
    formats = SCHEMA.objects.formats
    kind = definition.get("type", "string")
    if "format" in definition:
        pattern = formats[definition["format"]]["pattern"]
    elif "pattern" in definition:
        pattern = definition["pattern"]
    elif kind in ("number", "integer", "string", "boolean"):
        pattern = formats[kind]["pattern"]
    else:
        raise Unsupported(f"column type {kind}")
    if re.fullmatch(pattern, value) is None:
        return False
    if kind in ("number", "integer"):
        number = float(value)
        if "minimum" in definition and number < definition["minimum"]:
            return False
        if "maximum" in definition and number > definition["maximum"]:
            return False
    return True


def _check_table(report: Report, ctx: dict[str, Any], where: str, rule: Any) -> None:
    """One tabular_data rule on one TSV file: initial columns in order, required columns,
    additional columns, every cell against its column's definition, index uniqueness."""
    path, header, cells = ctx["path"], ctx["_header"], ctx["columns"]
    columns_def = SCHEMA.objects.columns
    names = {key: columns_def[key]["name"] for key in rule["columns"]}
    initial = [columns_def[key]["name"] for key in rule.get("initial_columns", [])]
    if header[: len(initial)] != initial:
        report.findings.append(
            Finding("error", path, f"first columns {header[: len(initial)]} != {initial} ({where})")
        )
    for key, spec in rule["columns"].items():
        if names[key] not in header and _level(spec) == "required":
            report.findings.append(Finding("error", path, f"column {names[key]} is required ({where})"))
    extra = [h for h in header if h not in names.values()]
    additional = rule.get("additional_columns", "allowed")
    if extra and additional in ("not_allowed", "allowed_if_defined"):
        # allowed_if_defined: defined in a JSON sidecar of the table; bedside writes none.
        report.findings.append(
            Finding("error", path, f"columns {extra} not defined by the schema ({where}: {additional})")
        )
    for key, column in names.items():
        if column not in header:
            continue
        definition = columns_def[key].to_dict()
        bad = [v for v in cells[column] if not _value_ok(definition, v)]
        if bad:
            shown = {k: v for k, v in definition.items() if k not in ("description", "display_name")}
            report.findings.append(Finding("error", path, f"column {column}: {bad[:3]} not accepted by {shown}"))
    for key in rule.get("index_columns", []):
        values = cells.get(columns_def[key]["name"], [])
        if len(set(values)) != len(values):
            report.findings.append(Finding("error", path, f"index column {key} not unique"))


def validate_folder(root: Path) -> Report:
    """Apply the schema's sidecar, JSON, tabular and check rules to every file."""
    report = Report()
    dataset = _dataset(root)
    exists = _exists_in(root)
    metadata = SCHEMA.objects.metadata
    for ctx in contexts(root):
        ctx["dataset"] = dataset
        ev = Evaluator(ctx, exists)
        path = ctx["path"]
        for group, target in (("sidecars", "sidecar"), ("json", "json")):
            if target == "json" and "json" not in ctx:
                continue
            if target == "sidecar" and ctx["extension"] == ".json":
                continue  # sidecar rules describe a data file; a .json file is a sidecar
            for where, rule in _rules(group, "fields"):
                if not _selected(ev, rule):
                    continue
                report.rules_applied.add(where)
                content = ctx[target]
                for key, spec in rule["fields"].items():
                    level = _level(spec)
                    if key not in content:
                        if level in ("required", "recommended"):
                            report.findings.append(
                                Finding("error" if level == "required" else "warning", path,
                                        f"{key} is {level} ({where})")
                            )  # fmt: skip
                        continue
                    definition = metadata[key].to_dict()
                    errors = list(jsonschema.Draft202012Validator(definition).iter_errors(content[key]))
                    if errors:
                        report.findings.append(
                            Finding("error", path, f"{key}={content[key]!r}: {errors[0].message}")
                        )
        if "columns" in ctx:
            for where, rule in _rules("tabular_data", "columns"):
                if _selected(ev, rule):
                    report.rules_applied.add(where)
                    _check_table(report, ctx, where, rule)
        for where, rule in _rules("checks", "checks"):
            if not _selected(ev, rule):
                continue
            report.rules_applied.add(where)
            for check in rule["checks"]:
                if not ev(check):
                    issue = rule.get("issue", {})
                    report.findings.append(
                        Finding(issue.get("level", "error"), path,
                                f"{issue.get('code', where)}: {check} ({where})")
                    )  # fmt: skip
    return report
