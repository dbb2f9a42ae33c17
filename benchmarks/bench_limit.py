"""The project's propeller transit model against the independent closed-form limit.

Usage (from the repository root):
    PYTHONPATH=. python benchmarks/bench_limit.py [--n 100000] [--repeats 3] [--seed 1]

Model: the bundled under-ice demo (configs/under_ice_section.toml; 3 legs, fouling with onset,
linear fade, crabbing in cross currents), its inputs drawn by inverse transform. Both sides get
the same per-sample, per-leg physics (clean hull drag from the scenario's routing, currents,
battery), so what is timed is the transit itself: ``physics.mission.fly_route`` (the project:
exact per leg; also its Runge-Kutta path) against ``benchmarks/propeller_limit.py`` (closed
form per leg, Newton for the reserve crossing; shares no code with the project). Prints the
agreement of range, duration and margin, the samples per second of each and the ratio
project / limit (issue target: >= 0.5).
"""
import argparse
import dataclasses
import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import _machine  # noqa: E402,F401  (one BLAS thread, before numpy work)
from propeller_limit import propeller_transit, propeller_transit_scalar  # noqa: E402

from physics import mission  # noqa: E402
from uq import simulate as sim  # noqa: E402
from uq.scenario import load_scenario  # noqa: E402

CONFIG = Path(__file__).resolve().parents[1] / "configs" / "under_ice_section.toml"


def _inputs(scenario, n, seed):
    u = np.random.default_rng(seed).random((n, len(scenario.inputs)))
    return np.column_stack([m.ppf(u[:, i]) for i, m in enumerate(scenario.inputs)])


def _best(func, repeats):
    best, out = np.inf, None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--loop-n", type=int, default=5000, help="rows for the scalar loop (scaled)")
    ap.add_argument("--block", type=int, default=2 ** 15,
                    help="rows per call on both sides (the engine's block size by default)")
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")  # water below 0 degC: the viscosity fit's range caution
    sc = load_scenario(CONFIG)
    x = _inputs(sc, args.n, args.seed)
    f = sim._Fields(sc, x)
    rates = sim._propeller_rates(sc, f, sim._hotel(sc, f))
    b, fo = sc.battery, sc.fouling
    battery = mission.BatteryState(
        nominal_energy=f(b.nominal_energy_Wh) * 3600.0, cold_derating=f(b.cold_derating),
        fade_rate=f(b.fade_per_day) / 86400.0, usable_fraction=f(b.usable_fraction),
        reserve_fraction=f(b.reserve_fraction))
    legs = dict(leg_length=f.legs(sc.legs, "length_km") * 1000.0,
                current_along=f.legs(sc.legs, "current_along_m_s"),
                current_across=f.legs(sc.legs, "current_across_m_s"),
                fouling_growth_factor=f.legs(sc.legs, "fouling_growth_factor"),
                fouling_onset=f(fo.onset_days) * 86400.0,
                fouling_time_constant=f(fo.time_constant_days) * 86400.0)
    drawable0 = battery.drawable(np.zeros(args.n))
    fade = battery.fade_rate

    blocks = [slice(i, min(i + args.block, args.n)) for i in range(0, args.n, args.block)]

    def part(value, rows):
        return value[rows] if np.ndim(value) >= 1 else value

    def project(**kw):
        def run():
            outs = [mission.fly_route(take(rates, rows), take(battery, rows),
                                      **{k: part(v, rows) for k, v in legs.items()}, **kw)
                    for rows in blocks]
            return mission.TransitOutcome(*(
                np.concatenate([getattr(o, f) for o in outs]) if f != "profile" else None
                for f in mission.TransitOutcome._fields))
        return run

    def limit():
        outs = [propeller_transit(
            part(rates.clean_drag, rows), part(rates.speed, rows),
            part(rates.propulsive_efficiency, rows), part(rates.hotel_load, rows),
            part(rates.drag_increase, rows), part(legs["leg_length"], rows),
            part(legs["current_along"], rows), part(legs["current_across"], rows),
            part(legs["fouling_growth_factor"], rows), part(legs["fouling_onset"], rows),
            part(legs["fouling_time_constant"], rows), part(drawable0, rows), part(fade, rows))
            for rows in blocks]
        return tuple(np.concatenate(column) for column in zip(*outs))

    def take(model, rows):
        return dataclasses.replace(model, **{
            f.name: part(getattr(model, f.name), rows) for f in dataclasses.fields(model)})

    # the project three ways: exact per leg with the 8-column-a-leg profile turn-back reads
    # (what an under-ice scenario runs), exact with leg boundaries only (a scenario without
    # ice), and the Runge-Kutta path the exact one replaced for propeller vehicles
    variants = {"fly_route exact, profile for turn-back": project(),
                "fly_route exact, leg boundaries only": project(profile_steps=1),
                "fly_route Runge-Kutta (before)": project(integration="runge-kutta")}
    limit()
    t_l, (rng, duration, margin) = _best(limit, args.repeats)
    timed = {}
    for name, func in variants.items():  # interleaved with the limit: same machine state
        func()
        timed[name] = _best(func, args.repeats)
    t_l = min(t_l, _best(limit, args.repeats)[0])
    out = timed["fly_route exact, profile for turn-back"][1]
    ok = out.arrived & ~out.range_censored & np.isfinite(duration)
    rel = lambda a, b: np.max(np.abs(a - b) / np.maximum(np.abs(b), 1.0))  # noqa: E731
    print(_machine.machine_report())
    print(f"model: {CONFIG.name}, n = {args.n:,} samples in calls of {args.block:,} rows on "
          f"both sides, {ok.sum():,} compared (arrived, not censored)")
    print(f"closed-form limit: {args.n / t_l:12,.0f} samples/s ({t_l:.3f} s)")
    for name, (t_p, o) in timed.items():
        print(f"{name:42s}: {args.n / t_p:10,.0f} samples/s ({t_p:.3f} s), project / limit = "
              f"{t_l / t_p:.3f}; agreement with the limit (max relative): range "
              f"{rel(o.range[ok], rng[ok]):.1e}, duration {rel(o.duration[ok], duration[ok]):.1e}, "
              f"margin {rel(o.margin[ok], margin[ok]):.1e}")
    print("issue target: project / limit >= 0.5")
    t_p = timed["fly_route exact, profile for turn-back"][0]
    # the scalar baseline: the same closed form per sample in plain Python (lists of floats)
    m = min(args.loop_n, args.n)
    cols = [a[:m].tolist() for a in (rates.clean_drag, rates.hotel_load, legs["leg_length"],
                                     legs["current_along"], legs["current_across"],
                                     legs["fouling_growth_factor"])]
    per = [a[:m].tolist() for a in (rates.speed, rates.propulsive_efficiency, rates.drag_increase,
                                    legs["fouling_onset"], legs["fouling_time_constant"],
                                    drawable0, fade)]

    def scalar_loop():
        return [propeller_transit_scalar(cd, u, eta, h, dd, L, ca, cx, k, on, tau, a0, fr)
                for cd, h, L, ca, cx, k, u, eta, dd, on, tau, a0, fr in zip(*cols, *per)]

    t_s, rows = _best(scalar_loop, 1)
    scalar_range = np.array([r[0] for r in rows])
    print(f"scalar Python loop (same closed form, math): {m / t_s:10,.0f} samples/s; project is "
          f"{(args.n / t_p) / (m / t_s):.1f}x the loop; loop agrees with the limit to "
          f"{rel(scalar_range[ok[:m]], rng[:m][ok[:m]]):.1e}")


if __name__ == "__main__":
    main()
