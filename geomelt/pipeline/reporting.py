"""Assemble a run's HTML report from what the run measured and wrote.

The report (:mod:`geomelt.io.report`) is one self-contained file beside the
outputs: quick-look maps, class areas and melt production per setting with the
regional totals, the production of each plate-boundary line, the ranked
prospects, the statistics of every output, cells outside a method's calibrated
range, the parameters, the inputs with their checksums, the warnings and the
screening caution.
"""

from __future__ import annotations

import json
import math
import time
from pathlib import Path
from typing import Any

import numpy as np

import geomelt
from geomelt.classes import SETTING
from geomelt.io.report import ReportFigure, ReportSection, ReportTable, RunReport, write_report

__all__ = ["REPORT_NAME", "build_run_report", "write_run_report"]

REPORT_NAME = "report.html"
"""File name of the run report in the output folder."""

_PRODUCTION_COLUMNS = (
    ("melt_production_m3_km2_yr_km3_yr", "all melt"),
    ("ridge_melt_production_m3_km2_yr_km3_yr", "ridges"),
    ("rift_melt_production_m3_km2_yr_km3_yr", "rifts"),
    ("arc_melt_production_m3_km2_yr_km3_yr", "arcs"),
    ("plume_melt_production_m3_km2_yr_km3_yr", "plumes"),
)
_TOP_LINES = 25
_TOP_PROSPECTS = 20


def _finite(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _setting_table(totals: dict[str, np.ndarray]) -> ReportTable | None:
    area = totals.get("setting_area_km2")
    if area is None:
        return None
    present = [key for key, _ in _PRODUCTION_COLUMNS if key in totals]
    labels = SETTING.labels()
    whole = float(area.sum())
    rows = []
    for code in np.flatnonzero(area > 0):
        row: list[Any] = [labels.get(int(code), f"code {code}"), float(area[code])]
        row.append(100.0 * float(area[code]) / whole if whole > 0 else None)
        row += [float(totals[key][code]) for key in present]
        rows.append(row)
    rows.sort(key=lambda r: -r[1])
    total_row: list[Any] = ["whole region", whole, 100.0 if whole > 0 else None]
    total_row += [float(totals[key].sum()) for key in present]
    rows.append(total_row)
    columns = ["setting", "area (km²)", "share (%)"]
    columns += [title for key, title in _PRODUCTION_COLUMNS if key in present]
    return ReportTable(
        "Area and melt production per setting (melt in km³ per year)",
        columns,
        rows,
        note=(
            "Areas are true (ellipsoidal) cell areas summed per setting class; production is "
            "the melt production rate density times cell area. For scale: the global ridge "
            "system makes about 20 km³ of melt per year and all arcs together a few km³ per "
            "year (Crisp 1984; White, Crisp & Spera 2006)."
        ),
    )


def _reach_table(plan, totals: dict[str, np.ndarray]) -> ReportTable | None:
    from geomelt.pipeline.summaries import GEOTHERMAL_REACH_LAYERS

    keys = [f"reach_area_km2:{layer}" for _, layer in GEOTHERMAL_REACH_LAYERS]
    if not all(k in totals for k in keys) or "setting_area_km2" not in totals:
        return None
    thermal = plan.parameters["thermal_state"]
    reach = thermal.screening_temperature_depth_km
    temps = (thermal.direct_use_isotherm_c, thermal.binary_isotherm_c, thermal.flash_isotherm_c)
    labels = SETTING.labels()
    area = totals["setting_area_km2"]
    rows = []
    for code in np.flatnonzero(area > 0):
        values = [float(totals[k][code]) for k in keys]
        if any(v > 0 for v in values):
            rows.append([labels.get(int(code), f"code {code}"), *values])
    rows.sort(key=lambda r: -r[1])
    rows.append(["whole region", *(float(totals[k].sum()) for k in keys)])
    columns = ["setting"] + [
        f"{name} {t:g} °C (km²)"
        for (name, _), t in zip(GEOTHERMAL_REACH_LAYERS, temps, strict=True)
    ]
    return ReportTable(
        f"Ground with geothermal temperatures within {reach:g} km of the surface",
        columns,
        rows,
        note=(
            "Area where each isotherm lies at most screening_temperature_depth_km deep, from "
            "the steady-state geotherm; thresholds are common practice for direct use, binary "
            "and flash plants. Steady-state temperatures ignore fluid circulation, so they "
            "screen for heat, not for a reservoir."
        ),
    )


def _lines_table(boundaries) -> ReportTable | None:
    if boundaries is None or "melt_production_km3_km_myr" not in boundaries:
        return None
    frame = boundaries[np.isfinite(boundaries["melt_production_km3_yr"].to_numpy(float))]
    frame = frame.sort_values("melt_production_km3_yr", ascending=False).head(_TOP_LINES)
    name_col = next((c for c in ("name", "label", "segment") if c in frame), None)
    rows = []
    for _, r in frame.iterrows():
        rate = r.get("rate_mm_yr")
        rows.append(
            [
                int(r["boundary_id"]),
                str(r[name_col]) if name_col and r[name_col] is not None else "",
                str(r["boundary_type"]),
                float(r["length_km"]),
                _finite(float(rate)) if rate is not None else None,
                float(r["melt_production_km3_yr"]),
                _finite(float(r["melt_production_km3_km_myr"])),
            ]
        )
    return ReportTable(
        "Melt production of plate-boundary lines",
        [
            "boundary_id",
            "name",
            "type",
            "length (km)",
            "rate (mm/yr)",
            "melt (km³/yr)",
            "melt per length (km³/km/Myr)",
        ],
        rows,
        note=(
            "Each cell's ridge, rift or arc production is credited to its nearest line of that "
            "type. Published ranges for comparison: arcs 20-95 km³/km/Myr (Reymer & Schubert "
            "1984; Dimalanta et al. 2002, from memory); a ridge making 7 km of crust at 50 "
            "mm/yr full rate, 350 km³/km/Myr. Rates left blank in the input take the "
            "documented default of their boundary type. Also in results.gpkg, layer "
            "plate_boundaries."
        ),
    )


def _prospects_table(prospects) -> ReportTable | None:
    if prospects is None:
        return None
    rows = []
    for _, r in prospects.head(_TOP_PROSPECTS).iterrows():
        rows.append(
            [
                int(r["rank"]),
                str(r["screen_title"]),
                float(r["area_km2"]),
                float(r["mean_score"]),
                float(r["max_score"]),
                str(r["dominant_setting"]),
                str(r["dominant_mechanism"]),
                str(r["dominant_magma_type"]),
                str(r["drivers"]),
            ]
        )
    return ReportTable(
        f"Top prospects (of {len(prospects)})",
        [
            "rank",
            "screen",
            "area (km²)",
            "mean score",
            "max score",
            "setting",
            "melting mechanism",
            "magma type",
            "what drove the score",
        ],
        rows,
        note=(
            "Contiguous cells whose score reaches the screen's threshold, ranked by mean "
            "score. All prospects, with their polygons, are in results.gpkg, layer prospects. "
            "A prospect is ground worth a closer look, not a resource."
        ),
    )


def _outputs_table(stats, outside: dict[str, int]) -> ReportTable:
    rows = []
    for name, st in stats.items():
        d = st.as_dict()
        cells = d["valid_cells"] + d["nodata_cells"]
        rows.append(
            [
                f"{name}.tif",
                d["unit"].replace(" ", "\u00a0"),
                d["min"],
                d["mean"],
                d["max"],
                100.0 * d["nodata_cells"] / cells if cells else None,
                outside.get(name),
            ]
        )
    return ReportTable(
        "Output rasters",
        ["file", "unit", "min", "mean", "max", "nodata (%)", "outside calibration (cells)"],
        rows,
        note=(
            "'outside calibration' counts cells with valid inputs that a method left without "
            "a value because they fall outside its calibrated range (never clipped); a dash "
            "means the method has no such range. Distances and rates of boundaries are nodata "
            "beyond the search reach, plate age on continents."
        ),
    )


def _parameter_tables(plan) -> list[ReportTable]:
    tables = []
    for alg in plan.algorithms:
        p = plan.parameters[alg.id]
        consts = type(p).constants()
        rows = []
        for key, value in p.as_dict().items():
            shown = ", ".join(f"{v:g}" for v in value) if isinstance(value, list | tuple) else value
            rows.append([key, shown, consts[key].unit, consts[key].source])
        tables.append(
            ReportTable(
                f"{alg.title} ({alg.id} {alg.version})",
                ["parameter", "value", "unit", "source of the default"],
                rows,
                align_numbers=False,
            )
        )
    return tables


def build_run_report(
    *,
    plan,
    out_dir: Path,
    figures: list[tuple[str, Path]],
    stats: dict,
    totals: dict[str, np.ndarray],
    boundaries,
    prospects,
    warnings: list[str],
    input_meta: dict[str, dict[str, str]],
    elapsed_s: float,
    outside_calibration: dict[str, int] | None = None,
    files: list[str] | None = None,
) -> RunReport:
    """The report's content (see the module docstring); nothing is written here."""
    grid = plan.grid
    facts = [
        ("producer", f"geomelt {geomelt.__version__}"),
        ("finished (UTC)", time.strftime("%Y-%m-%d %H:%M:%S", time.gmtime())),
        ("configuration", str(plan.config.source) if plan.config.source else "(command line)"),
        ("output folder", str(out_dir)),
        ("grid", grid.describe()),
        ("cells", f"{grid.width * grid.height:,}"),
        ("algorithms", ", ".join(f"{a.id} {a.version}" for a in plan.algorithms)),
        ("run time", f"{elapsed_s:.1f} s"),
    ]
    sections = []
    maps = ReportSection(
        "Maps",
        paragraphs=[
            "Quick-look maps at reduced resolution; the full-resolution layers are the "
            "GeoTIFFs and results.gpkg beside this report."
        ],
        figures=[ReportFigure(title, path) for title, path in figures if path.stem != "prospects"],
    )
    sections.append(maps)
    production = ReportSection("Settings and melt production")
    table = _setting_table(totals)
    if table is not None:
        production.tables.append(table)
        if "melt_production_m3_km2_yr_km3_yr" in totals:
            total = float(totals["melt_production_m3_km2_yr_km3_yr"].sum())
            production.paragraphs.append(
                f"The region makes {total:.3g} km³ of mantle and crustal melt per year in this "
                "screening estimate."
            )
    lines = _lines_table(boundaries)
    if lines is not None:
        production.tables.append(lines)
    if production.tables:
        sections.append(production)
    table = _reach_table(plan, totals)
    if table is not None:
        sections.append(ReportSection("Geothermal heat within reach", tables=[table]))
    table = _prospects_table(prospects)
    if table is not None:
        section = ReportSection("Prospects", tables=[table])
        section.figures = [
            ReportFigure(
                "Ranked prospects",
                path,
                "Outlines coloured by screen over the faded setting map; numbers are ranks.",
            )
            for _, path in figures
            if path.stem == "prospects"
        ]
        sections.append(section)
    sections.append(
        ReportSection("Output layers", tables=[_outputs_table(stats, outside_calibration or {})])
    )
    sections.append(ReportSection("Parameters", tables=_parameter_tables(plan)))
    inputs = ReportTable(
        "Inputs",
        ["layer", "file", "sha256"],
        [[name, meta["file"], meta["sha256"]] for name, meta in input_meta.items()],
        align_numbers=False,
    )
    notes = ReportTable("Plan notes", ["note"], [[n] for n in plan.notes], align_numbers=False)
    sections.append(ReportSection("Inputs and provenance", tables=[inputs, notes]))
    links = [(name, name) for name in (files or [])]
    return RunReport(
        title="geomelt run report",
        caution=geomelt.CAUTION,
        facts=facts,
        sections=sections,
        warnings=list(warnings),
        links=links,
    )


def write_run_report(path: Path, **content) -> Path:
    """Build (:func:`build_run_report`) and write the report to ``path`` atomically."""
    return write_report(path, build_run_report(**content))


def totals_as_records(totals: dict[str, np.ndarray]) -> list[tuple[str, str, str]]:
    """Regional totals as run-metadata records (``kind, key, JSON value``)."""
    recs = []
    labels = SETTING.labels()
    area = totals.get("setting_area_km2")
    if area is not None:
        for code in np.flatnonzero(area > 0):
            entry = {"area_km2": float(area[code])}
            for key, _ in _PRODUCTION_COLUMNS:
                if key in totals:
                    entry[key.removesuffix("_m3_km2_yr_km3_yr") + "_km3_yr"] = float(
                        totals[key][code]
                    )
            for key, values in totals.items():
                if key.startswith("reach_area_km2:"):
                    layer = key.split(":", 1)[1].removesuffix("_depth_km")
                    entry[f"{layer}_within_reach_km2"] = float(values[code])
            recs.append(("total", labels.get(int(code), str(code)), json.dumps(entry)))
    return recs
