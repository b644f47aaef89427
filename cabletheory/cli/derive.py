"""``cabletheory derive``: print a derived cable solution as readable text and as LaTeX.

The case is chosen among fixed options (origin, far end, part); no formula is ever read from
the user. sympy is imported only when the command runs.
"""

from __future__ import annotations

import argparse
import json

from .. import PASSIVE_CAVEAT
from ..symbolic import ENDS, ORIGINS, PARTS, derive, to_ascii

_ORIGIN_HELP = {
    "current": "current injected at a sealed origin X = 0",
    "clamp": "voltage clamp at X = 0",
    "soma": "lumped isopotential soma at X = 0 (ball and stick), current into the soma",
}
_PART_HELP = {
    "steady": "steady state for a step at the origin",
    "point": "current injected at an interior point X0 (Green's function, steady and Laplace)",
    "modes": "eigenfunctions, eigenvalue equation, norms and expansion coefficients",
    "laplace": "Laplace-domain solution for a step at the origin",
    "all": "everything above",
}


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "derive",
        help="derive a cable solution symbolically and print it as text and LaTeX",
        description=(
            "Derive, with sympy, the solution of the dimensionless passive cable equation "
            "∂V/∂T = ∂²V/∂X² − V for one cylinder and print it. X = x/λ, T = t/τm, L = ℓ/λ; "
            "V is in units of I·R∞ (or of the clamp step). " + PASSIVE_CAVEAT
        ),
    )
    parser.add_argument("--origin", choices=ORIGINS, default="current",
                        help="condition at X = 0: " + "; ".join(f"{k}: {v}" for k, v in _ORIGIN_HELP.items())
                        + " (default current)")
    parser.add_argument("--end", choices=ENDS, default="sealed",
                        help="condition at X = L: sealed (no axial current), killed (V = 0) or leaky "
                             "(end-conductance ratio B = G_end/G∞) (default sealed)")
    parser.add_argument("--soma-ratio", choices=("rho", "rho-inf"), default="rho",
                        help="with --origin soma: express the soma by Rall's ρ = G_D/G_S (rho) or by "
                             "ρ∞ = G∞/G_S (rho-inf) (default rho)")
    parser.add_argument("--part", choices=(*PARTS, "all"), default="all",
                        help="what to print: " + "; ".join(f"{k}: {v}" for k, v in _PART_HELP.items())
                        + " (default all)")
    form = parser.add_mutually_exclusive_group()
    form.add_argument("--text", action="store_true", help="print only the readable text")
    form.add_argument("--latex", action="store_true", help="print only the LaTeX")
    form.add_argument("--json", action="store_true",
                      help="print JSON: case, assumptions, normalisation, each part as text and LaTeX")
    parser.add_argument("--ascii", action="store_true", help="readable text without Unicode characters")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    parameter = args.soma_ratio.replace("-", "_")
    derivation = derive(args.origin, args.end, soma_parameter=parameter, part=args.part)
    if args.json:
        data = derivation.as_json(args.part)
        data["caveat"] = PASSIVE_CAVEAT
        print(json.dumps(data, indent=2, ensure_ascii=False))
        return 0
    chunks = []
    if not args.latex:
        chunks.append(derivation.text(args.part, unicode=not args.ascii))
    if not args.text:
        if chunks:
            chunks.append("LaTeX\n-----")
        chunks.append(derivation.latex(args.part))
    chunks.append(PASSIVE_CAVEAT if not args.ascii else to_ascii(PASSIVE_CAVEAT))
    print("\n".join(chunks))
    return 0

