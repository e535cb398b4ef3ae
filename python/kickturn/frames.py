"""Study documents as pandas DataFrames: one row per point (sweeps, comparisons) or per trade
factor, in the columns of the command line's ``--csv`` tables, at full precision.

pandas is optional: these functions import it when they are called.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Dict, List, Mapping, Optional

if TYPE_CHECKING:  # pragma: no cover
    import pandas

#: The swept column's unit of each sweep axis (``--csv``'s ``swept_<label>`` column).
AXIS_LABELS = {
    "azimuth": "azimuth_deg",
    "inclination": "inclination_deg",
    "altitude": "altitude_km",
    "payload": "payload_kg",
}

#: Result columns of a solved study point, as ``--csv`` names them.
POINT_COLUMNS = (
    "payload_kg",
    "propellant_used_kg",
    "margin_kg",
    "margin_mps",
    "ideal_mps",
    "gravity_loss_mps",
    "drag_loss_mps",
    "steering_loss_mps",
    "back_pressure_loss_mps",
    "earth_rotation_mps",
    "rotating_frame_mps",
    "inclination_deg",
    "perigee_alt_km",
    "max_dynamic_pressure_kpa",
    "max_axial_accel_g",
    "trajectories",
)


def point_row(label: str, point: Mapping[str, Any]) -> Dict[str, Any]:
    """One study point as a row: ``swept_<label>``, ``status``, ``message`` and the results
    (``None`` for a point that was not solved)."""
    row: Dict[str, Any] = {
        f"swept_{label}": point["value"],
        "status": point["status"],
        "message": point.get("message"),
    }
    r: Optional[Mapping[str, Any]] = point.get("report")
    if r is None:
        row.update({c: None for c in POINT_COLUMNS})
        return row
    b, o = r["budget"], r["orbit"]
    row.update(
        payload_kg=r["payload_kg"],
        propellant_used_kg=r["propellant_used_kg"],
        margin_kg=r["margin_kg"],
        margin_mps=r["margin_mps"],
        ideal_mps=b["ideal_mps"],
        gravity_loss_mps=b["gravity_loss_mps"],
        drag_loss_mps=b["drag_loss_mps"],
        steering_loss_mps=b["steering_loss_mps"],
        back_pressure_loss_mps=b["back_pressure_loss_mps"],
        earth_rotation_mps=b["earth_rotation_mps"],
        rotating_frame_mps=b["rotating_frame_mps"],
        inclination_deg=o["inclination_deg"],
        perigee_alt_km=o["perigee_alt_km"],
        max_dynamic_pressure_kpa=r["max_dynamic_pressure_pa"] / 1e3,
        max_axial_accel_g=r["max_axial_accel_g"],
        trajectories=r["convergence"]["trajectories"],
    )
    return row


def sweep_frame(report: Mapping[str, Any]) -> "pandas.DataFrame":
    """A sweep document (``kickturn.sweep`` or ``kickturn.dask.sweep``) as a DataFrame, one row
    per point in input order; the document itself is kept in ``frame.attrs["report"]``."""
    import pandas

    label = AXIS_LABELS[report["axis"]]
    rows: List[Dict[str, Any]] = [point_row(label, p) for p in report["points"]]
    columns = [f"swept_{label}", "status", "message", *POINT_COLUMNS]
    frame = pandas.DataFrame(rows, columns=columns)
    frame.attrs["report"] = report
    return frame


def grid_frame(report: Mapping[str, Any]) -> "pandas.DataFrame":
    """A grid document (``kickturn.grid`` or ``kickturn.dask.grid``) as a DataFrame, one row per
    point in input order, with a ``swept_<label>`` column per axis."""
    import pandas

    labels = [AXIS_LABELS[a] for a in report["axes"]]
    rows: List[Dict[str, Any]] = []
    for values, point in zip(report["rows"], report["points"]):
        row = point_row(labels[-1], point)
        del row[f"swept_{labels[-1]}"]
        rows.append({**{f"swept_{k}": v for k, v in zip(labels, values)}, **row})
    columns = [*(f"swept_{k}" for k in labels), "status", "message", *POINT_COLUMNS]
    frame = pandas.DataFrame(rows, columns=columns)
    frame.attrs["report"] = report
    return frame


def compare_frame(report: Mapping[str, Any]) -> "pandas.DataFrame":
    """A comparison document as a DataFrame, one row per problem (``problem`` is its name)."""
    import pandas

    rows = [{"problem": name, **point_row("index", p)} for name, p in report["problems"]]
    frame = pandas.DataFrame(rows, columns=["problem", "swept_index", "status", "message",
                                            *POINT_COLUMNS])
    frame.attrs["report"] = report
    return frame


def trade_frame(report: Mapping[str, Any]) -> "pandas.DataFrame":
    """A trade document as a DataFrame, one row per factor, in ``--csv``'s columns
    (``parameter``, ``step``, ``factor``, ``unit``, ``ok``)."""
    import pandas

    rows = [
        {
            "parameter": f["name"],
            "step": f["step"],
            "factor": f["factor"],
            "unit": f["unit"],
            "ok": f["ok"],
        }
        for f in report["factors"]
    ]
    frame = pandas.DataFrame(rows, columns=["parameter", "step", "factor", "unit", "ok"])
    frame.attrs["report"] = report
    return frame


#: Result columns of a dispersed sample, as ``kickturn dispersions --csv`` names them.
SAMPLE_COLUMNS = (
    "status",
    "target_met",
    "perigee_error_km",
    "apogee_error_km",
    "inclination_error_deg",
    "propellant_remaining_kg",
)


def dispersions_frame(report: Mapping[str, Any]) -> "pandas.DataFrame":
    """A dispersion document (``kickturn.dispersions`` or ``kickturn.dask.dispersions``) as a
    DataFrame, one row per sample in index order, in ``--csv``'s columns: ``index``,
    ``sample_seed``, a column per dispersed quantity (its draw, in its unit), then the results
    (``None`` where ``--csv`` leaves a cell empty)."""
    import pandas

    names = [v["name"] for v in report["variables"]]
    rows: List[Dict[str, Any]] = []
    for s in report["runs"]:
        row: Dict[str, Any] = {"index": s["index"], "sample_seed": s["sample_seed"]}
        row.update(zip(names, s["draws"]))
        row.update({c: s[c] for c in SAMPLE_COLUMNS})
        rows.append(row)
    frame = pandas.DataFrame(rows, columns=["index", "sample_seed", *names, *SAMPLE_COLUMNS])
    frame.attrs["report"] = report
    return frame
