"""Files out: ``summary.json``, ``cutoffs.csv`` and the tables beside them.

Everything is rendered in memory first and then written file by file to a temporary name and
renamed, so a crash never leaves a half-written file; a folder that already holds files is only
written into with ``force``.
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .errors import InputError
from .run import RunResult

__all__ = ["summary", "render_files", "write_files", "check_out_folder", "SCHEMA"]

SCHEMA = 1


def _clean(value: Any) -> Any:
    """JSON-safe: numpy scalars to Python, NaN and infinities to null, tuples to lists."""
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_clean(v) for v in value]
    if isinstance(value, np.bool_ | bool):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        value = float(value)
        return value if math.isfinite(value) else None
    return value


def summary(result: RunResult) -> dict[str, Any]:
    """The contents of ``summary.json`` (schema 1)."""
    scenario, history, decision = result.scenario, result.history, result.decision
    row = result.recommended_counts
    strategies = {name: d.as_dict() for name, d in result.strategies.items()}
    recommended = {key: row[key] for key in ("hits", "false_alarms", "misses", "correct_negatives",
                                             "hit_rate", "specificity", "miss_rate", "false_alarm_rate",
                                             "false_alarm_ratio", "historical_cost")}
    out = {
        "schema": SCHEMA,
        "tool_version": __version__,
        "scenario": {"name": scenario.name, "sha256": scenario.sha256, "event": scenario.event.name,
                     "action": scenario.decision.action, "flip": scenario.event.flip,
                     "hazard": scenario.event.hazard},
        "history": {"file": Path(history.label).name, "sha256": history.sha256, "rows": history.n_rows,
                    "evaluated_rows": history.n_evaluated,
                    "training_rows": int(history.training.sum()),
                    "validation_rows": int(history.validation.sum()),
                    "start": history.start.isoformat(), "end": history.end.isoformat(),
                    "seasons": len(history.seasons), **result.quality},
        "currency": scenario.currency,
        "season_year": result.calendar.year,
        "season_occasions": result.calendar.n_occasions,
        "replicates": result.replicates,
        "seed": result.seed,
        "mean_block_days": result.mean_block_days,
        "reference": result.reference,
        "theoretical_cutoff": result.theoretical_cutoff,
        "recommended_cutoff": decision.recommended_cutoff,
        "recommended_cutoff_interval": decision.recommended_cutoff_interval,
        "near_optimal_band": decision.near_optimal_band,
        "break_even": decision.break_even,
        "confident_break_even": decision.confident_break_even,
        "relative_value": row["relative_value"],
        "strategies": strategies,
        "savings": {"mean": decision.savings.mean, "p05": decision.savings.p05,
                    "p95": decision.savings.p95, "prob_saving": decision.prob_saving},
        "recommended": recommended,
        "warnings": list(result.warnings),
    }
    return _clean(out)


def render_files(result: RunResult) -> dict[str, bytes]:
    """Every output file's name and bytes, rendered in memory."""
    files = {
        "summary.json": (json.dumps(summary(result), indent=2) + "\n").encode(),
        "cutoffs.csv": result.table.to_csv(index=False, lineterminator="\n").encode(),
        "value_curve.csv": result.value_curve.to_csv(index=False, lineterminator="\n").encode(),
        "reliability.csv": result.reliability.to_csv(index=False, lineterminator="\n").encode(),
    }
    return files


def check_out_folder(out: Path, force: bool) -> None:
    """Refuse to write into a folder that already holds files, unless ``force``."""
    if out.exists() and not out.is_dir():
        raise InputError(f"{out}: is a file, not a folder; choose another --out")
    if out.is_dir() and any(out.iterdir()) and not force:
        raise InputError(f"{out}: already holds results; add --force to replace them, or choose "
                         "another --out")


def write_files(files: Mapping[str, bytes], out: Path, force: bool) -> list[Path]:
    """Write ``files`` into ``out`` (created if needed), each to a temporary name then renamed."""
    check_out_folder(out, force)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    for name, data in files.items():
        target = out / name
        target.parent.mkdir(parents=True, exist_ok=True)
        temporary = target.with_name(f".{target.name}.tmp-{os.getpid()}")
        temporary.write_bytes(data)
        os.replace(temporary, target)
        written.append(target)
    return written
