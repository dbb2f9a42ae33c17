"""Per-sample inputs and outcomes of an assessment as netCDF (through xarray) and parquet.

One row per propagation sample, in plan order: every uncertain input by its dotted name (in
the scenario's file units) and every outcome of the transit model. The files carry what is
needed to regenerate them: the seed, the design (scheme, samples, replicates) and the SHA-256
of the scenario file (and of each data file behind its environment).

xarray, a netCDF engine and pyarrow are the optional ``ocean`` extra; without them
:func:`write_sample_exports` writes nothing and says so in its return value.
"""
from __future__ import annotations

import importlib.util
import json
import os
from pathlib import Path

import numpy as np
import pandas as pd

__all__ = ["samples_frame", "export_attributes", "write_samples_netcdf", "write_samples_parquet",
           "write_sample_exports", "NETCDF_NAME", "PARQUET_NAME"]

NETCDF_NAME = "samples.nc"
PARQUET_NAME = "samples.parquet"


def samples_frame(assessment) -> pd.DataFrame:
    """One row per propagation sample: the inputs by name, then the outcomes.

    Parameters
    ----------
    assessment : uq.studies.assess.Assessment

    Returns
    -------
    pandas.DataFrame
        Index ``sample``: the plan row of each sample kept (0..n-1 when every row is kept;
        above the row limit the first rows of each replicate, ``Propagation.kept``). Input
        columns keep their dotted names and file units (the unit is in the name, e.g.
        ``..._m_s``); outcome columns are those of the report's CSV (failure modes and legs
        by name).
    """
    prop = assessment.propagation
    sc = assessment.scenario
    inputs = pd.DataFrame(np.asarray(prop.inputs, dtype=float), columns=list(prop.input_names))
    outcomes = prop.outcomes
    if hasattr(outcomes, "to_frame"):
        out = outcomes.to_frame(sc)
    else:
        out = pd.DataFrame({k: np.asarray(v) for k, v in outcomes.items()})
    frame = pd.concat([inputs.reset_index(drop=True), out.reset_index(drop=True)], axis=1)
    if prop.kept is not None and not prop.kept.every_row:
        frame.index = prop.kept.row_index()
    frame.index.name = "sample"
    return frame


def export_attributes(assessment) -> dict[str, str | int]:
    """Provenance attributes of the export files (seed, design, scenario and data hashes)."""
    st = assessment.settings
    sc = assessment.scenario
    design = {"scheme": st.scheme, "samples": st.samples, "replicates": st.replicates,
              "seed": st.seed}
    kept = assessment.propagation.kept
    data = sorted({(s.file, s.sha256) for s in getattr(sc, "environment", ()) if s.file})
    return {
        "title": f"transit-risk per-sample inputs and outcomes: {sc.name}",
        "scenario_name": sc.name,
        "scenario_file": sc.source_path or "",
        "scenario_sha256": sc.source_sha256 or "",
        "seed": int(st.seed),
        "design": json.dumps(design, sort_keys=True),
        "data_files_sha256": json.dumps(dict(data), sort_keys=True),
        "transit_risk_version": str(assessment.versions.get("transit-risk", "")),
        "kept_rows": kept.sentence() if kept is not None else "",
    }


def write_samples_netcdf(assessment, path: str | os.PathLike) -> Path:
    """Write :func:`samples_frame` as netCDF: dimension ``sample``, one variable per column.

    Input variables carry ``long_name`` = the dotted input name (netCDF variable names keep
    it too); string columns (failure mode and leg names) are stored as strings.
    """
    import xarray as xr

    frame = samples_frame(assessment)
    names = _netcdf_names(frame.columns)
    ds = xr.Dataset({names[c]: ("sample", _column(frame[c])) for c in frame.columns},
                    coords={"sample": np.asarray(frame.index, dtype="int64")},
                    attrs=export_attributes(assessment))
    inputs = set(assessment.propagation.input_names)
    for c in frame.columns:
        ds[names[c]].attrs["long_name"] = str(c)
        if c in inputs:
            ds[names[c]].attrs["role"] = "uncertain input (scenario file units)"
    path = Path(path)
    ds.to_netcdf(path)
    return path


def write_samples_parquet(assessment, path: str | os.PathLike) -> Path:
    """Write :func:`samples_frame` as parquet, the attributes in the file's key-value metadata."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    frame = samples_frame(assessment).reset_index()
    table = pa.Table.from_pandas(frame, preserve_index=False)
    meta = dict(table.schema.metadata or {})
    meta.update({f"transit_risk.{k}".encode(): str(v).encode()
                 for k, v in export_attributes(assessment).items()})
    pq.write_table(table.replace_schema_metadata(meta), Path(path))
    return Path(path)


def write_sample_exports(assessment, folder: str | os.PathLike) -> tuple[str, ...]:
    """Write ``samples.nc`` and ``samples.parquet`` into ``folder`` where the libraries exist.

    Returns
    -------
    tuple of str
        The file names written (empty without the ocean extra).
    """
    folder = Path(folder)
    written = []
    if _have("xarray") and (_have("netCDF4") or _have("h5netcdf") or _have("scipy")):
        write_samples_netcdf(assessment, folder / NETCDF_NAME)
        written.append(NETCDF_NAME)
    if _have("pyarrow"):
        write_samples_parquet(assessment, folder / PARQUET_NAME)
        written.append(PARQUET_NAME)
    return tuple(written)


def _have(module: str) -> bool:
    return importlib.util.find_spec(module) is not None


def _netcdf_names(columns) -> dict:
    """Column -> netCDF variable name: '/' (the HDF5 group separator) becomes '_', kept unique;
    the column's own name stays in the variable's ``long_name``."""
    out: dict = {}
    used: set[str] = set()
    for c in columns:
        name = str(c).replace("/", "_") or "_"
        base, k = name, 1
        while name in used:
            name, k = f"{base}_{k}", k + 1
        used.add(name)
        out[c] = name
    return out


def _column(series: pd.Series) -> np.ndarray:
    if series.dtype == object:
        return series.astype(str).to_numpy()
    return series.to_numpy()
