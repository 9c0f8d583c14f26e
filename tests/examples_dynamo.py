"""Small real instances of the dynamo result types (box and ball solvers)."""

import flowkit
from result_examples import example


@example("GrowthResult")
def abc_growth():
    from flowkit.dynamo import growth_rate

    return growth_rate(flowkit.flow("abc"), 4.0, 8, check_resolution=None)


@example("RmSweep")
def still_ball_sweep():
    # u = 0 in the ball: every point is the free decay of the dipole (cheap, exact)
    from flowkit.dynamo import sweep_rm

    still = flowkit.custom_flow(["0", "0", "0"], domain="ball", name="still")
    return sweep_rm(still, [1.0, 2.0], resolution=(3, 8), check_resolution=None, progress=False)


@example("KzScan")
def roberts_kz_scan():
    from flowkit.dynamo import sweep_kz

    return sweep_kz(flowkit.flow("roberts"), 4.0, [0.5, 1.0], resolution=8, check_resolution=None,
                    progress=False)


@example("CriticalRm")
def abc_critical():
    from flowkit.dynamo import critical_rm

    return critical_rm(flowkit.flow("abc"), [6.0, 10.0], resolution=8, check_resolution=None, progress=False,
                       xtol=1e-2)
