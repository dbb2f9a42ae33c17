"""Coverage of the assessment's P(success) interval on the under-ice demo (slow).

The demo itself sits near P = 0.83 since the under-ice outcome classes (homing and loiter
at the recovery point are paid above the reserve); two variants with a larger pack put it
where the review's requirements sit: 17,000 Wh near P = 0.96 and 17,900 Wh near P = 0.99
(located with 8,192-sample runs; the reference run below checks where each one lands).

The variant's true P(success) is taken from a reference run 128 times larger than the runs
under test (16 x 2^14 scrambled Sobol' points; its own interval half width is about 0.0003,
twenty times narrower than the intervals being checked, so its error barely moves the
coverage). Each of 500 seeds then runs the assessment's propagation at N = 2,048 (16
replicates of 128) and the interval is scored against the reference. 500 repetitions: the
binomial sd of a coverage of 95 % is 1.0 %, so the issue's 93-97 % band is +-2 sd.
"""
import dataclasses

import pytest

from uq.scenario import load_scenario
from uq.scenario.demos import demo_path
from uq.studies.assess import _settings, propagate


def _scenario(energy_Wh=None):
    with demo_path("under_ice_section.toml") as path:
        s = load_scenario(path)
    if energy_Wh is not None:
        s = dataclasses.replace(s, battery=dataclasses.replace(s.battery,
                                                              nominal_energy_Wh=energy_Wh))
    return s


def _coverage(scenario, seeds=500):
    reference = propagate(scenario, _settings(scenario, samples=16 * 2**14, replicates=16,
                                              seed=1, sensitivity_base_n=0)).p_success.estimate
    covered = low_miss = 0
    for seed in range(1000, 1000 + seeds):
        p = propagate(scenario, _settings(scenario, samples=2048, replicates=16, seed=seed,
                                          sensitivity_base_n=0)).p_success
        covered += p.lower <= reference <= p.upper
        low_miss += p.lower > reference
    # the measured figures, shown by ``pytest -m slow -rP`` for the closing note
    print(f"reference P {reference:.5f}: coverage {covered / seeds:.3f}, lower-side miss "
          f"(false-GO side) {low_miss / seeds:.3f} over {seeds} seeds")
    return reference, covered / seeds, low_miss / seeds


@pytest.mark.slow
def test_p_success_interval_covers_93_to_97_percent_near_0_96():
    reference, coverage, low_miss = _coverage(_scenario(17_000.0))
    assert 0.95 <= reference <= 0.97  # the variant sits near P = 0.96
    assert 0.93 <= coverage <= 0.97, coverage
    assert low_miss <= 0.035, low_miss  # the false-GO side


@pytest.mark.slow
def test_p_success_interval_covers_93_to_97_percent_near_0_99():
    # variant: a 17,900 Wh pack instead of 16,000 Wh puts the demo near P = 0.99
    reference, coverage, low_miss = _coverage(_scenario(17_900.0))
    assert 0.985 <= reference <= 0.995
    assert 0.93 <= coverage <= 0.97, coverage
    assert low_miss <= 0.035, low_miss
