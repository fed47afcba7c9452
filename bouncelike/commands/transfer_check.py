"""``bouncelike transfer-check``: error certificate of the cached bounce transfer.

Compares the cached transfer T = P_bounce / P_standard with exact mode integration at random
backgrounds of one potential family (quadratic: random mass and bounce field; Starobinsky:
random mass and bounce potential fraction; perturbations/transfer_backgrounds.py) and random
x = k/k_LQC in x_min-100 (every placement of the observable window relative to the bounce
scale); prints the maximum relative error above several x, pointwise and relative to the
oscillation-averaged T.
"""

from __future__ import annotations

from typing import Any

from ._layer import CommandResult, Options

NAME = "transfer-check"
HELP = "certify the cached bounce transfer against exact mode integration at random points"
OPTIONS = Options(compiles=True)


def add_arguments(parser: Any) -> None:
    # names checked in run() against the registries (building the parser imports no numerics)
    parser.add_argument("--prescription", default="dressed_metric",
                        choices=("dressed_metric", "deformed_algebra"))
    parser.add_argument("--state", default="remote_past",
                        help="initial state of the modes (perturbations/states.py STATES; "
                             "default remote_past)")
    parser.add_argument("--potential", default="quadratic",
                        help="family of backgrounds with a cache (quadratic, starobinsky; "
                             "default quadratic)")
    parser.add_argument("--x-min", type=float, default=0.01,
                        help="smallest k/k_LQC drawn (default 0.01)")
    parser.add_argument("--backgrounds", type=int, default=4,
                        help="random backgrounds (default 4)")
    parser.add_argument("--points", type=int, default=60,
                        help="random x per background (default 60)")
    parser.add_argument("--seed", type=int, default=0)


def run(args: Any, session: Any) -> CommandResult:
    from ..errors import InputError
    from ..perturbations.states import STATES
    from ..perturbations.transfer import certificate
    from ..perturbations.transfer_backgrounds import FAMILIES

    if args.state not in STATES:
        raise InputError(f"--state = '{args.state}' is not known; allowed: {', '.join(STATES)}")
    if args.potential not in FAMILIES:
        raise InputError(f"--potential = '{args.potential}' has no transfer cache; allowed: "
                         f"{', '.join(FAMILIES)}")
    if args.points < 2:
        raise InputError("--points must be >= 2")
    if args.backgrounds < 1:
        raise InputError("--backgrounds must be >= 1")
    if args.seed < 0:
        raise InputError(f"--seed = {args.seed} is out of range; allowed: >= 0")
    if args.prescription == "deformed_algebra" and args.state != "remote_past":
        raise InputError("--state: the deformed algebra allows only remote_past")
    if not 0.01 <= args.x_min < 100:
        raise InputError(f"--x-min = {args.x_min:g} is out of range; allowed: 0.01 to 100 "
                         "(the tabulated k/k_LQC)")
    c = certificate(args.backgrounds, args.points, args.seed, args.prescription, args.state,
                    (args.x_min, 100.0), args.potential)
    return CommandResult(data=c, text=certificate_text(c, args))


def certificate_text(c: dict, args: Any) -> str:
    tol = c["tolerance"]
    lines = [
        f"transfer ({args.prescription}, {args.state}, {args.potential}): {args.backgrounds} "
        f"random backgrounds x {args.points} random k/k_LQC in {args.x_min:g}-100; conformal "
        "duration calibrated over "
        f"{c['conformal_duration_range'][0]:.0f}-{c['conformal_duration_range'][1]:.0f}",
        "  k/k_LQC range   max rel. error   vs period mean   of period mean   target 1%"]
    for rng, err in c["max_error_by_range"].items():
        if err is None:
            lines.append(f"  {rng:>13}   {'(no points)':>14}")
            continue
        em = c["max_error_vs_mean_by_range"][rng]
        ea = c["max_error_of_period_mean_by_range"][rng]
        lines.append(f"  {rng:>13}   {err:14.2e}   {em:14.2e}   {ea:14.2e}   "
                     f"{'met' if err <= tol else 'NOT met'}")
    lines.append("  k/k_LQC >=      max rel. error   vs period mean")
    for cut, err in c["max_error_above"].items():
        em = c["max_error_vs_mean_above"][cut]
        lines.append(f"  {cut:>13}   {err:14.2e}   {em:14.2e}   "
                     f"{'met' if err <= tol else 'NOT met'}")
    if c["skipped"]:
        lines.append(f"  ({len(c['skipped'])} backgrounds skipped: the state cannot be set at "
                     "the default past density there, as in the forward model)")
    return "\n".join(lines)
