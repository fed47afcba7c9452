"""``bouncelike transfer-check``: error certificate of the cached bounce transfer.

Compares the cached ratio of bounce to standard spectra with exact mode integration at random
backgrounds (quadratic inflaton, random mass and bounce field) and random placements of the
observable window relative to k_LQC; prints the certified range and the maximum relative errors.
"""

from __future__ import annotations

NAME = "transfer-check"
HELP = "certify the cached bounce transfer against exact mode integration at random points"


def add_arguments(parser) -> None:
    parser.add_argument("--prescription", default="dressed_metric",
                        choices=("dressed_metric", "deformed_algebra"))
    parser.add_argument("--points", type=int, default=8, help="random points (default 8)")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--json", action="store_true", help="print the certificate as JSON")


def run(args) -> int:
    import json

    from ..errors import InputError
    from ..io import json_safe
    from ..perturbations.transfer import certificate

    if args.points < 1:
        raise InputError("--points must be >= 1")
    c = certificate(args.points, args.seed, args.prescription)
    if args.json:
        print(json.dumps(json_safe(c)))
        return 0
    print(f"transfer ({args.prescription}, remote_past): certified for k >= "
          f"{c['x_certified']:.3g} k_LQC at tolerance {c['tolerance']:.0%}")
    print(f"max relative error, certified range: {c['max_error_certified']:.2e}; "
          f"below it: {c['max_error_uncertified']:.2e} ({args.points} random points)")
    return 0
