"""Writing a render's files: images, metrics (JSON and CSV) and the run record."""

from __future__ import annotations

import hashlib
from pathlib import Path

from cloakview.render.files import run_record, write_csv, write_json, write_pngs

_CSV_COLUMNS = ("viewer", "replaced_fraction", "blocked_fraction", "showing_fraction",
                "hidden_fraction", "object_seen_ratio", "window_deg", "window_panel_mm",
                "window_share", "object_inner_deg", "object_outer_deg", "background_ssim",
                "shift_median_arcmin", "shift_p95_arcmin", "transmittance",
                "color_fringe_arcmin", "through_pixels", "verdict_class", "verdict")


def _csv_row(metrics: dict) -> dict:
    shift = metrics["background_shift_arcmin"] or {}
    row = {key: metrics.get(key) for key in _CSV_COLUMNS}
    row["shift_median_arcmin"] = shift.get("median")
    row["shift_p95_arcmin"] = shift.get("p95")
    return row


def write_viewer(out_dir: Path, render) -> list[Path]:
    """Write one viewer's images and metrics into ``out_dir/<viewer>/``."""
    folder = Path(out_dir) / render.viewer.name
    pictures = {folder / f"{name}.png": image for name, image in render.images.items()}
    write_pngs(pictures)
    written = list(pictures)
    metrics = dict(render.metrics, seconds=round(render.seconds, 3))
    write_json(folder / "metrics.json", metrics)
    written.append(folder / "metrics.json")
    return written


def write_summary(out_dir: Path, renders, scene_path: Path, options: dict,
                  started: float) -> None:
    """Write all viewers' metrics (JSON, CSV) and ``run.json`` with inputs and timings."""
    out_dir = Path(out_dir)
    table = [r.metrics for r in renders]
    write_json(out_dir / "metrics.json", table)
    write_csv(out_dir / "metrics.csv", [_csv_row(m) for m in table], _CSV_COLUMNS)
    digest = hashlib.sha256(Path(scene_path).read_bytes()).hexdigest()
    run_record(out_dir, "render", options, started, scene=str(scene_path),
               scene_sha256=digest,
               viewer_seconds={r.viewer.name: round(r.seconds, 3) for r in renders})
