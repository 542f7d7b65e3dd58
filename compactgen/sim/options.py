"""Simulator settings the project recommends, with the measurements behind them.

The datasheet states these (templates/datasheet/model.md.j2); the designer decks in ngspice_decks/
use DECK_OPTIONS, the verification harness HARNESS_OPTIONS.  The step cap is given in points per
precession period of the card's own FMR frequency: max step = 1/(POINTS_PER_PERIOD f_fmr).
"""
from __future__ import annotations

#: transient options of the designer decks (ngspice_decks/*.cir), and why each value
DECK_OPTIONS = (
    ("method", "trap", "the trapezoidal rule keeps the precession's amplitude; gear damps it numerically"),
    ("reltol", "1e-4", "with the step cap above, switching times within 0.4 % of the reference (table); "
                       "reltol=1e-6 gives 0.05 % whatever the cap, for about twice the CPU time"),
    ("abstol", "1e-12", "1 pA: far below every current that matters (read currents of microamperes; the state "
                        "nodes' residual currents are of order 1 A because the residual is scaled to O(1))"),
    ("vntol", "1e-7", "the states are node voltages of magnitude 1 (m_x, m_y, m_z), resolved to 1e-7"),
    ("chgtol", "1e-20", "the state nodes carry charges tsc*m of about {state_charge} C, so a charge tolerance far "
                        "below reltol*q keeps the step control relative; measured: ngspice's default 1e-14 C gave "
                        "the same switching times here, because the step cap limits the step first"),
)

#: VACASK settings with the same meaning (its netlist control block)
VACASK_OPTIONS = 'tran_method="trap" reltol=1e-4 tran_fbr=0.01'
VACASK_WHY = "tran_fbr=0.01 for accurate steps after pulse edges (measured); maxstep = the step cap"

#: options of the verification harness (ngspice_decks/bench.cir.j2): tighter, so that the rendered
#: models are compared with the reference and not with the integrator's tolerance
HARNESS_OPTIONS = "method=trap reltol=1e-6 abstol=1e-15 vntol=1e-9 chgtol=1e-22 trtol=1"

#: recommended step cap in points per precession period (from STEP_CAP_TABLE, reltol 1e-4)
POINTS_PER_PERIOD = 50

#: points per period where the free layer is integrated in its co-rotating frame (stt-mtj at rest by
#: default, no in-plane field): no precession to resolve, so the cap only bounds the step
POINTS_PER_PERIOD_COROTATING = 10

#: switching-time error against the reference, CPU time and time points versus the step cap in the
#: laboratory frame (the precession resolved: thermal_rest = 0, an in-plane field, sot-mtj), measured
#: with `benchmarks/bench_step_cap.py --set thermal_rest=0,tilt0=0.084` (designer options, reltol 1e-4)
#: in ngspice 46 (shared library, one OpenMP thread; B-source library and compiled model) and VACASK
#: with openvaf-r, on one 2-core machine shared with other work.  Goal: at most 0.5 % in at most 2000
#: points for a ns switching event; 50 points per period meets it in ngspice (1906 points to a 3.3 ns
#: switch) and VACASK is at 0.41 % with 2017 points.
STEP_CAP_MEASURED = dict(
    card="pmtj35_demo", f_fmr="1.208e10 Hz", period="82.78 ps",
    benches="AP->P and P->AP writes at 2 x I_c0 from the thermal angle in the laboratory frame "
            "(reference switching times 2.941 ns and 3.318 ns)",
    # points per period (0 = no cap); per path (ngspice B-source, ngspice compiled, VACASK):
    # error %, CPU relative to N = 25, time points up to the switching time
    rows=((10, (1.19, 0.97, 787), (1.19, 0.88, 787), (0.57, 1.00, 1357)),
          (25, (0.93, 1.00, 971), (0.93, 1.00, 971), (0.60, 1.00, 1399)),
          (50, (0.32, 1.63, 1906), (0.33, 1.94, 1906), (0.41, 1.39, 2017)),
          (100, (0.10, 3.30, 3794), (0.14, 3.73, 3795), (0.20, 2.19, 3835)),
          (0, (1.17, 0.97, 784), (1.18, 0.86, 784), (0.57, 0.86, 1356))),
    reltol_1e6="with reltol=1e-6 the error is 0.05 % (ngspice) and 0.10 % (VACASK) for every cap, at about "
               "twice the CPU time of reltol=1e-4 with N = 50 (measured with ngspice 39)",
    no_cap="No cap: ngspice then limits the step to the .tran print step (10 ps here), VACASK to its own default",
)

#: the same measurement with the default rest state of stt-mtj (co-rotating frame, no precession on
#: the nodes), `benchmarks/bench_step_cap.py`, same machine and simulators
STEP_CAP_MEASURED_COROTATING = dict(
    card="pmtj35_demo", f_fmr="1.208e10 Hz", period="82.78 ps",
    benches="AP->P and P->AP writes at 2 x I_c0 (reference switching times 2.399 ns and 2.767 ns), the free "
            "layer in its co-rotating frame (thermal_rest = 1, no in-plane field)",
    rows=((10, (0.003, 0.47, 325), (0.003, 0.44, 325), (0.004, 0.72, 502)),
          (25, (0.001, 1.00, 791), (0.000, 1.00, 791), (0.000, 1.00, 942)),
          (50, (0.000, 1.99, 1570), (0.000, 2.02, 1570), (0.000, 1.36, 1676)),
          (100, (0.000, 3.93, 3130), (0.000, 4.06, 3130), (0.000, 2.06, 3165)),
          (0, (0.005, 0.41, 271), (0.005, 0.37, 271), (0.103, 0.63, 240))),
    reltol_1e6="no precession is left to resolve: every cap, and none, keeps the error within 0.11 %",
    no_cap="No cap: ngspice then limits the step to the .tran print step (10 ps here), VACASK to its own default",
)

#: the thermal field in ngspice (B-source library, [options] thermal_field = "noise-sources"):
#: benchmarks/bench_thermal_field.py (noise-step and cost) on the small test card of
#: tests/test_thermal_field.py (Delta 12, alpha 0.5, precession period P = 147 ps), ngspice 46;
#: the datasheet quotes it, devices/common.NOISE_STEPS_PER_PERIOD follows from it
THERMAL_FIELD_MEASURED = dict(
    card="test card Delta 12, alpha 0.5, P = 147 ps, ngspice 46",
    convergence="the effective temperature of the equilibrium (48 instances x 4 ns, maximum-likelihood "
                "Delta of the Boltzmann density, standard error ~0.023) was T_eff/T = 0.835, 0.907, 0.984, 1.013, "
                "0.984 with trrandom at noise steps P/5, P/10, P/20, P/40, P/80 (P = small-angle precession "
                "period) and 0.723, 0.854, 0.952, 0.978, 0.968 with trnoise; the stochastic reference (Heun) "
                "gave 0.996 and 0.994 at 2 and 0.5 ps. Default noise step P/40; too coarse a step makes the "
                "layer colder than the circuit.",
    cost="4 instances, 2 ns, designer tolerances, noise step = step cap = P/40: thermal_field=1 took 6587 time "
         "points and 12.0 x the CPU time of thermal_field=0 (560 points); thermal_field=2 5412 points, 11.5 x. "
         "ngspice restarts its step after the breakpoint at every sample: about 7-12 points per noise step "
         "(5-8 with reltol 1e-3, trtol 7, which compactgen's thermal ensembles use).",
)
