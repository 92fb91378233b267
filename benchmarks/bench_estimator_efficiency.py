"""Estimator efficiency: the spread of fitted R_on over 500 seeded simulated sweeps against the Cramér–Rao bound.

The sweeps run the simulator's own physics in-process (`benchlog.sim.bench.SimBench`,
the same objects the socket server drives; SCPI messages go through each
instrument's command tree, no sockets): a P-MOSFET, load wiring at 12 V, 30
points 0.1-3 A, meter on its 0.1 V range at 1 PLC. The bench (element, the
meter's fixed gain and offset, the thermal EMF) is one seed; each sweep draws
the meter's noise from its own seeded stream. The clock is frozen, so the
junction stays at ambient and R_on does not drift between sweeps.

Noise model (`benchlog.sim.meter` docstring): one reading = truth·(1+g) + o +
N(0, σ²), σ = `reading_noise_v(0.1 V, 1 PLC, 50 Hz)`. For V = V0 + R·I with
known currents and Gaussian noise of known σ, the Fisher information gives the
Cramér–Rao bound var(R̂) >= σ²/Σ(I−Ī)² (Kay, Fundamentals of Statistical Signal
Processing: Estimation Theory, 1993, example 3.4 / eq. 3.33, from memory). The
fit under test is `benchlog.analysis.fits.fit_resistive`. Goal: its standard
deviation within 10 % of the bound's square root.

A second line shows what the bench actually delivers when the currents are the
load's noisy read-back (as `current_from = "load"` records them): then the
bound to first order is (σ_V² + R²·σ_I²)/Σ(I−Ī)² (errors in both variables,
small-noise limit, from memory).
"""

from __future__ import annotations

import math
import random
import time

import _common


def sweep(bench, setpoints, rng_name: str) -> tuple[list[float], list[float], list[float]]:
    """One sweep: true currents, meter readings, load read-backs."""
    from benchlog.scpi.replies import parse_number

    bench.meter.noise = random.Random(f"efficiency/meter/{rng_name}")
    bench.load.noise = random.Random(f"efficiency/load/{rng_name}")
    true_i, volts, readback = [], [], []
    for sp in setpoints:
        bench.load.execute(f"CURR {sp!r}")
        true_i.append(bench.operating_point().current_a)
        volts.append(parse_number(bench.meter.execute("READ?")))
        readback.append(parse_number(bench.load.execute("MEAS:CURR?")))
    return true_i, volts, readback


def main() -> int:
    p = _common.parser(__doc__.splitlines()[0])
    p.add_argument("--sweeps", type=int, default=500, help="simulated sweeps (default 500)")
    p.add_argument("--seed", type=int, default=7, help="the bench's seed (element, meter errors)")
    args = p.parse_args()
    if args.quick:
        args.sweeps = 20

    import numpy as np
    from scipy import stats

    from benchlog.analysis.fits import fit_resistive
    from benchlog.sim import specs
    from benchlog.sim.bench import SimBench
    from benchlog.sim.config import SimConfig
    from benchlog.sim.meter import reading_noise_v

    range_v, nplc = 0.1, 1.0
    # instant timing on a frozen clock: Tj stays at ambient and every setpoint holds at once (this measures
    # the estimator's spread, not time; with real timing a frozen clock would never let a setpoint settle)
    config = SimConfig(element="pmos", seed=args.seed, timing="instant")
    bench = SimBench(config, clock=lambda: 0.0)
    for cmd in ("VOLT 12", "CURR 3.2", "OUTP ON"):
        bench.supply.execute(cmd)
    for cmd in ("FUNC CURR", "CURR 0.1", "INP ON"):
        bench.load.execute(cmd)
    for cmd in (f"CONF:VOLT:DC {range_v}", f"VOLT:NPLC {nplc}"):
        bench.meter.execute(cmd)
    if bench.meter.errors.entries or bench.load.errors.entries or bench.supply.errors.entries:
        raise RuntimeError("the simulated instruments refused the set-up commands")
    sigma_v = reading_noise_v(range_v, nplc, config.line_frequency_hz)
    setpoints = np.linspace(0.1, 3.0, 30).tolist()

    t0 = time.perf_counter()
    r_known, r_readback, sxx = [], [], []
    for k in range(args.sweeps):
        true_i, volts, readback = sweep(bench, setpoints, f"{args.seed}/{k}")
        if any(v is None for v in volts):
            raise RuntimeError("meter overload during the efficiency sweep")
        r_known.append(fit_resistive(true_i, volts).params["r_on_ohm"])
        r_readback.append(fit_resistive(readback, volts).params["r_on_ohm"])
        x = np.asarray(true_i)
        sxx.append(float(((x - x.mean()) ** 2).sum()))
    elapsed = time.perf_counter() - t0
    r_known = np.asarray(r_known)
    r_readback = np.asarray(r_readback)
    n = args.sweeps
    crb = sigma_v ** 2 / float(np.mean(sxx))  # Σ(I−Ī)² is the same every sweep (same true currents)
    spread = float(r_known.std(ddof=1))
    ratio = spread / math.sqrt(crb)
    # 95 % interval of σ̂/σ for n samples: sqrt(chi2/(n-1)) quantiles
    lo, hi = (math.sqrt(stats.chi2.ppf(q, n - 1) / (n - 1)) for q in (0.025, 0.975))
    met = abs(ratio - 1.0) <= 0.10
    r_mean = float(r_known.mean())
    sigma_i = specs.LOAD_READBACK_NOISE_A
    crb_eiv = (sigma_v ** 2 + r_mean ** 2 * sigma_i ** 2) / float(np.mean(sxx))
    spread_rb = float(r_readback.std(ddof=1))
    truth = bench.truth()

    print(f"{n} sweeps of 30 points (P-MOSFET, seed {args.seed}, R_on truth {truth['r_on_ohm']:.6g} ohm at 25 °C) "
          f"in {elapsed:.1f} s of computing, in-process sim physics (no sockets, instant sim timing)")
    print(f"meter noise σ = reading_noise_v({range_v} V, {nplc:g} PLC, {config.line_frequency_hz:g} Hz) "
          f"= {sigma_v * 1e9:.1f} nV; Σ(I−Ī)² = {np.mean(sxx):.4g} A²")
    print(f"known currents:  std(R̂) = {spread * 1e9:.3f} nΩ; Cramér–Rao sqrt(σ²/Σ(I−Ī)²) = "
          f"{math.sqrt(crb) * 1e9:.3f} nΩ; ratio {ratio:.3f} "
          f"(sampling 95 % band for n={n}: {lo:.3f}..{hi:.3f}); goal within 10 %: {_common.verdict(met)}")
    print(f"load read-back currents (σ_I = {sigma_i * 1e3:g} mA): std(R̂) = {spread_rb * 1e9:.1f} nΩ against the "
          f"first-order errors-in-variables bound {math.sqrt(crb_eiv) * 1e9:.1f} nΩ "
          f"(ratio {spread_rb / math.sqrt(crb_eiv):.3f}; {math.sqrt(crb_eiv / crb):.1f}x the meter-only bound)")
    figures = {
        "sweeps": n, "points_per_sweep": 30, "seed": args.seed, "sigma_v": sigma_v, "sxx_a2": float(np.mean(sxx)),
        "std_r_ohm": spread, "crb_sqrt_ohm": math.sqrt(crb), "ratio": ratio, "band95": [lo, hi],
        "goal": "|ratio - 1| <= 0.10", "met": met, "mean_r_ohm": r_mean,
        "readback": {"sigma_i_a": sigma_i, "std_r_ohm": spread_rb, "bound_ohm": math.sqrt(crb_eiv),
                     "ratio": spread_rb / math.sqrt(crb_eiv)},
        "elapsed_s": elapsed, "generation": "in-process SimBench physics, frozen clock", "sim_timing": "instant",
    }
    _common.finish("estimator_efficiency", figures, args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
