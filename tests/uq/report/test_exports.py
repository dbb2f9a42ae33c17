"""Per-sample exports: netCDF through xarray and parquet (uq.report.exports)."""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

xr = pytest.importorskip("xarray", reason="netCDF exports need the ocean extra: pip install 'transit-risk[ocean]'")
pq = pytest.importorskip("pyarrow.parquet", reason="parquet exports need the ocean extra")

from uq.report import write_report  # noqa: E402
from uq.scenario import load_scenario  # noqa: E402
from uq.studies.assess import assess  # noqa: E402

DEMO = Path(__file__).resolve().parents[3] / "configs" / "under_ice_section.toml"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    a = assess(load_scenario(DEMO), samples=256, sensitivity_base_n=0)
    return a, write_report(a, tmp_path_factory.mktemp("exp") / "r")


def test_netcdf_holds_every_sample_and_the_provenance(report):
    a, folder = report
    with xr.open_dataset(folder / "samples.nc") as ds:
        assert ds.sizes["sample"] == a.propagation.inputs.shape[0]
        for j, name in enumerate(a.propagation.input_names):
            np.testing.assert_array_equal(ds[name].values, a.propagation.inputs[:, j])
        np.testing.assert_array_equal(ds["margin_Wh"].values, a.propagation.outcomes["margin_Wh"])
        assert int(ds.attrs["seed"]) == a.settings.seed
        assert ds.attrs["scenario_sha256"] == a.scenario.source_sha256
        assert json.loads(ds.attrs["design"])["samples"] == a.settings.samples


def test_parquet_matches_the_netcdf(report):
    a, folder = report
    table = pq.read_table(folder / "samples.parquet")
    frame = table.to_pandas()
    np.testing.assert_array_equal(frame["success"].to_numpy(), a.propagation.outcomes["success"])
    meta = {k.decode(): v.decode() for k, v in table.schema.metadata.items()}
    assert meta["transit_risk.seed"] == str(a.settings.seed)
    # summary.json keeps its shape: the exports add files, no keys
    summary = json.loads((folder / "summary.json").read_text())
    assert "samples_nc" not in summary and "exports" not in summary
