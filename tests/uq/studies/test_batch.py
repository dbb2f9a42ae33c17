"""Batch studies: study-file validation, grid expansion, common random numbers, backends."""
import json
import os
import shutil
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from uq.sampling import backends
from uq.scenario.study_file import (
    StudyFileError,
    StudySettingsError,
    VariantScenarioError,
    load_study,
)
from uq.studies.batch import run_study
from uq.studies.sweeps import evaluate_on_shared_samples

CONFIGS = Path(__file__).resolve().parents[3] / "configs"


def _study(tmp_path: Path, body: str, *, head: str | None = None) -> Path:
    """Write a study file next to a copy of the under-ice demo scenario."""
    shutil.copy(CONFIGS / "under_ice_section.toml", tmp_path / "base.toml")
    head = head if head is not None else textwrap.dedent("""\
        [study]
        name = "t"
        scenario = "base.toml"
        samples = 512
        seed = 11
        scheme = "sobol"
        replicates = 4
        """)
    path = tmp_path / "study.toml"
    path.write_text(head + textwrap.dedent(body))
    return path


# ----------------------------------------------------------------------------- validation
@pytest.mark.parametrize("body, head, error, match", [
    # unknown top-level table, with the closest known key suggested
    ('[grids]\n"setpoint.speed_m_s" = [1.2]\n', None, StudyFileError,
     r"study\.toml: grids = .*expected a known key of the top level.*did you mean 'grid'\?"),
    # unknown key of [study]
    ('[grid]\n"setpoint.speed_m_s" = [1.2]\n',
     '[study]\nname = "t"\nscenario = "base.toml"\nsample = 512\n', StudyFileError,
     r"study\.sample = 512: expected a known key of \[study\].*did you mean 'samples'\?"),
    # an override path whose last key does not exist in the base scenario
    ('[grid]\n"setpoint.sped_m_s" = [1.2]\n', None, StudyFileError,
     r'grid\."setpoint\.sped_m_s" = \[1\.2\]: expected a field present in the base scenario.*'
     r"has no key 'sped_m_s'.*did you mean 'speed_m_s'\?"),
    # a leg that the base scenario does not have
    ('[grid]\n"legs.skerow_ice_crossing.length_km" = [200.0]\n', None, StudyFileError,
     r"it has no leg 'skerow_ice_crossing'.*did you mean 'skerrow_ice_crossing'\?"),
    # a path that stops at a table instead of a field
    ('[grid]\n"vehicle.hull" = [1.0]\n', None, StudyFileError,
     r"expected a dotted path to one field \(vehicle\.hull is a table"),
    # analysis settings belong to the study, not to a variant
    ('[[variants]]\nname = "a"\noverrides = {"analysis.samples" = 64}\n', None, StudyFileError,
     r"variants\[0\]\.overrides\.\"analysis\.samples\" = 64: expected a scenario field that a "
     r"study may vary"),
    # grid and explicit variants together
    ('[grid]\n"setpoint.speed_m_s" = [1.2]\n[[variants]]\nname = "a"\n', None, StudyFileError,
     r"variants = .*not both"),
    # duplicate variant names
    ('[[variants]]\nname = "a"\n[[variants]]\nname = "a"\n', None, StudyFileError,
     r"variants\[1\]\.name = 'a': expected a unique variant name \(variants\[0\] has it\)"),
    # a grid entry that is not a list, and a repeated grid value
    ('[grid]\n"setpoint.speed_m_s" = 1.2\n', None, StudyFileError,
     r"grid\.\"setpoint\.speed_m_s\" = 1\.2: expected a non-empty list of values"),
    ('[grid]\n"setpoint.speed_m_s" = [1.2, 1.2]\n', None, StudyFileError,
     r"expected a list of distinct values \(1\.2 is repeated\)"),
    # Sobol' replicates need 2^m samples each
    ('[grid]\n"setpoint.speed_m_s" = [1.2]\n',
     '[study]\nname = "t"\nscenario = "base.toml"\nsamples = 1000\nreplicates = 4\n',
     StudyFileError, r"study\.samples = 1000: expected .*4 x 2\^m.*e\.g\. 1024"),
    # a base scenario that does not exist
    ('[grid]\n"setpoint.speed_m_s" = [1.2]\n',
     '[study]\nname = "t"\nscenario = "nowhere.toml"\n', StudyFileError,
     r"study\.scenario = 'nowhere\.toml': expected a readable scenario file"),
    # the variant's scenario is invalid: re-raised naming the variant and the scenario's error
    ('[grid]\n"setpoint.speed_m_s" = [1.2, -1.0]\n', None, VariantScenarioError,
     r"study\.toml: variant 'speed_m_s=-1': .*base\.toml: setpoint\.speed_m_s = -1\.0: "
     r"expected a speed through water"),
])
def test_study_file_errors_are_one_line_and_name_key_value_and_expectation(
        tmp_path, body, head, error, match):
    path = _study(tmp_path, body, head=head)
    with pytest.raises(error, match=match) as info:
        load_study(path)
    assert "\n" not in str(info.value)


# ----------------------------------------------------------------------------- expansion
def test_grid_is_the_cartesian_product_in_file_order_last_key_fastest(tmp_path):
    path = _study(tmp_path, """\
        [grid]
        "setpoint.speed_m_s" = [1.2, 1.4, 1.6]
        battery.nominal_energy_Wh = [16000.0, 18000.0]
        """)
    study = load_study(path)
    # derived: 3 x 2 combinations; dotted bare keys (nested TOML tables) read like quoted ones
    assert study.fields == ("setpoint.speed_m_s", "battery.nominal_energy_Wh")
    got = [(v.scenario.setpoint.speed_m_s, v.scenario.battery.nominal_energy_Wh)
           for v in study.variants]
    assert got == [(1.2, 16000.0), (1.2, 18000.0), (1.4, 16000.0), (1.4, 18000.0),
                   (1.6, 16000.0), (1.6, 18000.0)]
    assert study.variants[1].name == "speed_m_s=1.2, nominal_energy_Wh=18000"
    # the base scenario's other fields are untouched
    assert all(v.scenario.input_names == study.variants[0].scenario.input_names
               for v in study.variants)


def test_the_example_study_has_at_least_20_variants():
    study = load_study(CONFIGS / "speed_and_battery_study.toml")
    assert len(study.variants) >= 20
    # an override by distribution table keeps the field an input (same name, new marginal)
    means = {v.scenario.legs[1].current_along_m_s.params["mean"] for v in study.variants}
    assert means == {-0.08, -0.15}


def test_fixing_an_uncertain_input_drops_its_correlation(tmp_path):
    # the base scenario correlates the two along-track currents; fixing one must not leave a
    # correlation that names a fixed field (the scenario reader would reject it)
    path = _study(tmp_path, """\
        [[variants]]
        name = "still water on the crossing"
        overrides = {"legs.skerrow_ice_crossing.current_along_m_s" = 0.0}
        """)
    (variant,) = load_study(path).variants
    assert variant.scenario.legs[1].current_along_m_s == 0.0
    assert variant.scenario.correlations == ()


# ----------------------------------------------------------------------------- shared samples
def test_a_field_that_cannot_matter_gives_identical_outcomes(tmp_path):
    # derived: in the base scenario fouling starts after onset_days = 6 d, but a success must
    # arrive within max_duration_days = 4 d, so the drag increase at full fouling cannot change
    # any sample's success. On common random numbers the two variants agree sample by sample;
    # on independent samples their estimates would differ by sampling noise (~0.01 at n=512).
    path = _study(tmp_path, """\
        [[variants]]
        name = "light"
        overrides = {"fouling.drag_increase" = {dist = "pert", min = 0.05, mode = 0.15, max = 0.40}}
        [[variants]]
        name = "heavy"
        overrides = {"fouling.drag_increase" = {dist = "pert", min = 0.30, mode = 0.60, max = 0.95}}
        """)
    result = run_study(load_study(path))
    light, heavy = result.variants
    assert light.p_success_replicates == heavy.p_success_replicates
    assert light.p_success == heavy.p_success
    assert light.verdict.verdict == heavy.verdict.verdict


def test_a_bigger_battery_never_turns_a_success_into_a_failure(tmp_path):
    # derived: with every other input equal (common random numbers), more nominal energy only
    # adds usable energy, so success(small) implies success(big) sample by sample
    path = _study(tmp_path, """\
        [grid]
        "setpoint.speed_m_s" = [1.55]
        "battery.nominal_energy_Wh" = [16000.0, 16400.0]
        """, head='[study]\nname = "t"\nscenario = "base.toml"\nsamples = 1024\nseed = 5\n'
                  'scheme = "sobol"\nreplicates = 1\n')
    study = load_study(path)
    result = run_study(study)
    # the same plan through uq.studies' common-random-numbers helper (one Sobol' plan over the
    # union of input names): per-sample outcomes, and the batch numbers must match them
    small, big = evaluate_on_shared_samples([v.scenario for v in study.variants],
                                            samples=1024, seed=5, scheme="sobol", replicates=1)
    assert not np.any(small["success"] & ~big["success"])
    assert np.any(big["success"] & ~small["success"])  # the test can tell the two apart
    assert result.variants[0].p_success.estimate == small["success"].mean()
    assert result.variants[1].p_success.estimate == big["success"].mean()


# ----------------------------------------------------------------------------- invariance
def _grid_study(tmp_path, scheme="sobol", samples=512, replicates=4):
    return load_study(_study(tmp_path, """\
        [grid]
        "setpoint.speed_m_s" = [1.4, 1.6]
        "battery.nominal_energy_Wh" = [16000.0, 18000.0]
        """, head=f'[study]\nname = "t"\nscenario = "base.toml"\nsamples = {samples}\nseed = 3\n'
                  f'scheme = "{scheme}"\nreplicates = {replicates}\n'))


@pytest.mark.parametrize("scheme, replicates", [("sobol", 4), ("monte-carlo", 1)])
def test_numbers_do_not_depend_on_workers_or_chunking(tmp_path, scheme, replicates):
    # the engine's contract (uq/engine.py): block results do not depend on who computes them
    study = _grid_study(tmp_path, scheme=scheme, replicates=replicates)
    reference = run_study(study, block_size=128).to_frame()
    with backends.local_executor(2) as pool:
        seen = []
        parallel = run_study(study, block_size=128, chunk_blocks=3, executor=pool,
                             progress=seen.append).to_frame()
    pd.testing.assert_frame_equal(reference, parallel, check_exact=True)
    assert seen[-1] == 512 and seen == sorted(seen)
    if scheme == "sobol":
        # for Sobol' the block size is only the streaming granularity: the points and every
        # count are the same; streamed float sums may differ in the last bits (they are added
        # block by block), hence rtol 1e-12 there
        regrouped = run_study(study, block_size=64).to_frame()
        exact = ["p_success", "p_success_low", "p_success_high", "verdict", "contingency_days",
                 "top_input", "top_input_spearman"]
        pd.testing.assert_frame_equal(reference[exact], regrouped[exact], check_exact=True)
        pd.testing.assert_frame_equal(reference, regrouped, check_exact=False, rtol=1e-12)


def test_settings_are_checked():
    from uq.scenario.study_file import parse_study

    with pytest.raises(backends.BackendError, match="workers must be an integer >= 1; got 0"):
        with backends.local_executor(0):
            pass
    with pytest.raises(StudySettingsError, match=r"samples = 1000: expected 4 x 2\^m"):
        study = parse_study(
            {"study": {"name": "t", "scenario": str(CONFIGS / "under_ice_section.toml"),
                       "samples": 256, "replicates": 4},
             "grid": {"setpoint.speed_m_s": [1.4]}})
        run_study(study, samples=1000)


# ----------------------------------------------------------------------------- outputs
def test_missing_dask_names_the_optional_extra(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # makes `import distributed` fail
    with pytest.raises(backends.DaskUnavailableError,
                       match=r"pip install 'transit-risk\[dask\]'"):
        with backends.dask_executor(local_workers=1):
            pass


# ----------------------------------------------------------------------------- Dask
class _ExitOnce:
    """Task wrapper: the first task to claim the marker file kills its worker process."""

    def __init__(self, fn, marker):
        self.fn, self.marker = fn, str(marker)

    def __call__(self, task):
        try:
            fd = os.open(self.marker, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
        except FileExistsError:
            return self.fn(task)
        os.write(fd, str(os.getpid()).encode())
        os.close(fd)
        os._exit(1)  # the worker dies mid-task, as a lost machine would


class _KillingExecutor:
    def __init__(self, inner, marker):
        self.inner, self.marker = inner, marker

    def map(self, fn, iterable):
        return self.inner.map(_ExitOnce(fn, self.marker), iterable)


@pytest.fixture(scope="module")
def dask_cluster():
    pytest.importorskip("distributed")
    with backends.dask_executor(local_workers=2) as executor:
        yield executor


def test_a_local_dask_cluster_gives_exactly_the_local_numbers(tmp_path, dask_cluster):
    study = _grid_study(tmp_path)
    reference = run_study(study, block_size=64).to_frame()
    seen = []
    on_cluster = run_study(study, block_size=64, executor=dask_cluster,
                           progress=seen.append).to_frame()
    pd.testing.assert_frame_equal(reference, on_cluster, check_exact=True)
    assert seen[-1] == 512


def test_losing_a_worker_mid_run_leaves_the_result_unchanged(tmp_path, dask_cluster):
    study = _grid_study(tmp_path)
    reference = run_study(study, block_size=64).to_frame()
    marker = tmp_path / "killed"
    survived = run_study(study, block_size=64,
                         executor=_KillingExecutor(dask_cluster, marker)).to_frame()
    assert marker.exists() and int(marker.read_text()) != os.getpid()  # a worker did die
    pd.testing.assert_frame_equal(reference, survived, check_exact=True)


def test_correlated_shared_inputs_keep_their_values_when_a_variant_drops_an_input():
    # derived (common random numbers): one copula over the union of inputs, so a variant
    # that fixes an input listed before the correlated pair still sees, row by row, the
    # same values of the correlated currents as the base variant
    import tomllib

    from uq.studies.batch import _StudyModel, _VariantModel
    from uq.scenario import parse_scenario
    from uq.studies.sweeps import columns_for, shared_copula, shared_unit_points

    doc = tomllib.loads((CONFIGS / "under_ice_section.toml").read_text())
    base = parse_scenario(doc)
    doc["vehicle"]["hotel_load_W"] = 40.0  # the first input becomes a fixed number
    fixed = parse_scenario(doc)
    union = list(base.input_names)
    model = _StudyModel(tuple(_VariantModel(s, tuple(columns_for(s, union)))
                              for s in (base, fixed)),
                        shared_copula([base, fixed], union))
    out_base, out_fixed = model(shared_unit_points(union, 256, seed=3))
    for name in ("legs.skerrow_ice_crossing.current_along_m_s",
                 "legs.tallin_recovery_run.current_along_m_s"):
        np.testing.assert_array_equal(out_base["inputs"][:, base.input_names.index(name)],
                                      out_fixed["inputs"][:, fixed.input_names.index(name)])
