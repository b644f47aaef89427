r"""Symbolic derivations of the passive cable equation (sympy), for display and for checking.

Every result here is *derived* by sympy from the dimensionless cable equation and its
boundary conditions, not typed in: the ordinary differential equations in X are solved with
``sympy.dsolve``, the boundary conditions are imposed by solving the linear equations for the
integration constants, mode norms come from orthogonality integrals (``sympy.integrate``), and
the Laplace-domain solution comes from ``sympy.laplace_transform`` of the equation in T.
The numeric modules (``cable``, ``eigen``, ``transient``, ``precise``) are tested against these
expressions through :func:`to_numeric`, so a typo in either path is caught.

Normalisation (Rall 1959, 1969; Jack, Noble & Tsien 1975, recalled from memory):

* ``X = x/λ`` (position), ``T = t/τm`` (time), ``L = ℓ/λ`` (electrotonic length);
* voltages are deviations from rest. With a current input ``I`` they are in units of
  ``I·R∞``, where ``R∞ = r_i·λ`` is the input resistance of a semi-infinite cylinder of the
  same diameter; with a voltage clamp at X = 0 they are in units of the clamp step ``V_c``;
* the end at X = L has Rall's end-conductance ratio ``B = G_end/G∞`` (leaky end; B = 0
  sealed, B → ∞ killed);
* a lumped soma at X = 0 has conductance G_S and the same τm as the cylinder; it enters as
  ``ρ∞ = G∞/G_S`` or as Rall's ``ρ = G_D/G_S`` with G_D the cylinder's steady input
  conductance (for a sealed end ``G_D = G∞ tanh L``, so ``ρ∞ = ρ coth L``);
* the Laplace variable ``s`` is in units of ``1/τm`` and ``q = √(1 + s)``.

The cable equation in these units is :math:`\partial V/\partial T = \partial^2 V/\partial X^2 - V`,
with injected currents entering through the boundary condition at X = 0 (or a jump of
:math:`-\partial V/\partial X` by the injected current at an interior point X0).
Every result assumes a passive, linear membrane with uniform Rm, Ri and Cm.

sympy is imported inside the functions, never at module import.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from .errors import DerivationError, InputError

__all__ = [
    "ASSUMPTIONS",
    "ENDS",
    "NORMALISATION",
    "ORIGINS",
    "PARTS",
    "SOMA_PARAMETERS",
    "Derivation",
    "derive",
    "symbol",
    "to_ascii",
    "to_numeric",
]

ORIGINS = ("current", "clamp", "soma")
ENDS = ("sealed", "killed", "leaky")
SOMA_PARAMETERS = ("rho", "rho_inf")
PARTS = ("steady", "point", "modes", "laplace")

ASSUMPTIONS = (
    "passive, linear membrane (no voltage-gated conductances)",
    "uniform Rm, Ri and Cm along the cylinder; one equivalent cylinder",
    "voltages are deviations from rest; the cable starts at rest (V = 0 at T = 0)",
)

NORMALISATION = (
    ("X", "x/λ, electrotonic position"),
    ("T", "t/τm, normalised time"),
    ("L", "ℓ/λ, electrotonic length"),
    ("V", "deviation from rest in units of I·R∞ (current input) or of the clamp step V_c"),
    ("B", "G_end/G∞, end-conductance ratio of the leaky end"),
    ("s", "Laplace variable in units of 1/τm; q = √(1 + s)"),
    ("α", "mode wavenumber; decay rate 1 + α², time constant τm/(1 + α²)"),
)

_ORIGIN_TEXT = {
    "current": "current injected at a sealed origin X = 0",
    "clamp": "voltage clamp at X = 0",
    "soma": "lumped soma at X = 0 (ball and stick), current injected into the soma",
}
_END_TEXT = {
    "sealed": "sealed end at X = L",
    "killed": "killed end (V = 0) at X = L",
    "leaky": "leaky end at X = L with end-conductance ratio B",
}

# canonical names accepted by symbol() and to_numeric(); value = sympy symbol name, assumptions
_SYMBOL_SPECS: dict[str, tuple[str, dict[str, bool]]] = {
    "X": ("X", {"nonnegative": True}),
    "X0": ("X_0", {"nonnegative": True}),
    "T": ("T", {"nonnegative": True}),
    "L": ("L", {"positive": True}),
    "B": ("B", {"positive": True}),
    "rho": ("rho", {"positive": True}),
    "rho_inf": ("rho_inf", {"positive": True}),
    "alpha": ("alpha", {"positive": True}),
    "s": ("s", {}),
    "q": ("q", {"positive": True}),
}


def symbol(name: str) -> Any:
    """The sympy symbol used in the derivations for a canonical ``name``.

    Names: ``X``, ``X0`` (source position), ``T``, ``L``, ``B``, ``rho`` (Rall's ρ = G_D/G_S),
    ``rho_inf`` (ρ∞ = G∞/G_S), ``alpha`` (mode wavenumber), ``s`` (Laplace variable), ``q``.
    """
    return _symbol(name)


@functools.cache
def _symbol(name: str) -> Any:
    import sympy as sp

    try:
        sym_name, assumptions = _SYMBOL_SPECS[name]
    except KeyError:
        raise InputError(f"symbol: {name!r} is not one of {', '.join(_SYMBOL_SPECS)}") from None
    return sp.Symbol(sym_name, **assumptions)


def _canonical_name(sym: Any) -> str:
    for name, (sym_name, _) in _SYMBOL_SPECS.items():
        if sym_name == sym.name:
            return name
    return str(sym.name)


# --------------------------------------------------------------------------------------
# the result object
# --------------------------------------------------------------------------------------
@dataclass(frozen=True, slots=True)
class Derivation:
    """The derived solutions for one choice of origin and end condition (sympy expressions).

    All expressions are dimensionless (see the module docstring for the normalisation).
    ``None`` marks a part that does not exist for the case (a clamp has no zero mode).

    Attributes
    ----------
    origin, end : the chosen conditions (``ORIGINS``, ``ENDS``)
    soma_parameter : ``"rho"`` or ``"rho_inf"`` for a soma, else ``None``
    name : a one-line description
    assumptions : what every result here assumes
    equation : the cable equation, a sympy ``Eq`` in ``V(X, T)``
    origin_condition, end_condition : the boundary conditions, sympy ``Eq`` (time domain)
    steady_state : V(X) for a unit step at the origin, T → ∞
    point_source : steady V(X) for a unit current injected at X0 (Green's function, Piecewise)
    eigenfunction : φ(X) of the homogeneous problem, with wavenumber ``alpha``
    eigenvalue_equation : f(α) whose positive roots are the α_n (pole-free form, f = 0)
    zero_mode : φ_0(X) if α = 0 is a mode (decay e^{-T}, time constant τm), else ``None``
    mode_norm : N(α) = ∫_0^L φ² dX (+ φ(0)²/ρ∞ for a soma), the orthogonality weight
    coefficient : c(α, X) in V(X,T) = V_ss(X) − Σ_n c(α_n, X) e^{-(1+α_n²)T}
    zero_mode_coefficient : c_0(X), the coefficient of e^{-T}, or ``None``
    impulse_coefficient : φ(X)φ(X0)/N(α), the mode weight of a unit charge injected at X0
    laplace : Laplace transform of V(X, T) for a unit step at the origin
    laplace_point_source : Laplace transform of V(X, T) for a unit impulse of current at X0
    soma_relation : for ``soma_parameter="rho"``, the derived ``Eq(ρ∞, ρ·G∞/G_D)``
    shown_as : the equivalent ρ∞ derivation, which is shorter to read; text and LaTeX show it
        together with ``soma_relation`` (the fields above are in ρ, for numeric use)
    """

    origin: str
    end: str
    soma_parameter: str | None
    name: str
    assumptions: tuple[str, ...]
    equation: Any
    origin_condition: Any
    end_condition: Any
    steady_state: Any
    point_source: Any
    eigenfunction: Any
    eigenvalue_equation: Any
    zero_mode: Any
    mode_norm: Any
    coefficient: Any
    zero_mode_coefficient: Any
    impulse_coefficient: Any
    laplace: Any
    laplace_point_source: Any
    soma_relation: Any = None
    shown_as: Derivation | None = None
    derived: tuple[str, ...] = PARTS

    def parts(self, part: str = "all") -> list[tuple[str, Any]]:
        """(label, sympy Eq) pairs for ``part`` in ``PARTS`` or ``"all"``, in reading order."""
        import sympy as sp

        if part != "all" and part not in PARTS:
            raise InputError(f"part: {part!r} is not one of {', '.join((*PARTS, 'all'))}")
        missing = [p for p in (PARTS if part == "all" else (part,)) if p not in self.derived]
        if missing:
            raise InputError(f"part: {', '.join(missing)} was not derived (derive(..., part=...) with that part)")
        if self.shown_as is not None:
            shown = self.shown_as.parts(part)
            return [*shown[:3], ("Rall's ρ = G_D/G_S gives ρ∞ = G∞/G_S as", self.soma_relation), *shown[3:]]
        X, s, a = (_symbol(n) for n in ("X", "s", "alpha"))
        V, U, phi = sp.Function("V"), sp.Function("V̂"), sp.Function("phi")
        out: list[tuple[str, Any]] = [
            ("cable equation", self.equation),
            ("condition at the origin, X = 0", self.origin_condition),
            ("condition at the far end, X = L", self.end_condition),
        ]
        if part in ("steady", "all"):
            out.append(("steady state, unit step at the origin", sp.Eq(V(X, sp.oo), self.steady_state)))
        if part in ("point", "all"):
            out.append(("steady state, unit current at X0 (Green's function)",
                        sp.Eq(V(X, sp.oo), self.point_source)))
            out.append(("Laplace domain, unit charge at X0 (Green's function)",
                        sp.Eq(U(X, s), self.laplace_point_source)))
        if part in ("modes", "all"):
            out.append(("eigenfunction", sp.Eq(phi(X), self.eigenfunction)))
            out.append(("eigenvalue equation (α_n > 0 are its roots)", sp.Eq(self.eigenvalue_equation, 0)))
            out.append(("time constants", sp.Eq(sp.Symbol("tau_n") / sp.Symbol("tau_m"), 1 / (1 + a**2))))
            if self.zero_mode is not None:
                out.append(("zero mode α_0 = 0 (time constant τm)", sp.Eq(phi(X), self.zero_mode)))
            out.append(("mode norm (orthogonality integral)", sp.Eq(sp.Symbol("N"), self.mode_norm)))
            out.append(("step response V = V(X,∞) − Σ c_n e^{−(1+α_n²)T}, coefficient",
                        sp.Eq(sp.Symbol("c"), self.coefficient)))
            if self.zero_mode_coefficient is not None:
                out.append(("coefficient of e^{−T}", sp.Eq(sp.Symbol("c_0"), self.zero_mode_coefficient)))
            out.append(("unit charge at X0, weight of each mode",
                        sp.Eq(sp.Symbol("g_n"), self.impulse_coefficient)))
        if part in ("laplace", "all"):
            out.append(("Laplace domain, unit step at the origin", sp.Eq(U(X, s), self.laplace)))
        return out

    def text(self, part: str = "all", *, unicode: bool = True) -> str:
        """Readable multi-line text (``sympy.pretty``) of ``part``, with the assumptions."""
        import sympy as sp

        lines = [self.name, "", "Assumptions:"]
        lines += [f"  - {a}" for a in self.assumptions]
        lines += ["", "Normalisation:"]
        lines += [f"  {k} = {v}" for k, v in NORMALISATION]
        for label, eq in self.parts(part):
            shown = _display(eq, for_latex=False, unicode=unicode)
            lines += ["", f"{label}:", sp.pretty(shown, use_unicode=unicode, wrap_line=False)]
        text = "\n".join(lines) + "\n"
        return text if unicode else to_ascii(text)

    def latex(self, part: str = "all") -> str:
        """LaTeX (``sympy.latex``) of ``part``: one ``% label`` comment line and one equation each."""

        lines = [f"% {self.name}"]
        lines += [f"% assumption: {a}" for a in self.assumptions]
        for label, eq in self.parts(part):
            lines += [f"% {label}", _latex(eq)]
        return "\n".join(lines) + "\n"

    def as_json(self, part: str = "all") -> dict[str, Any]:
        """A JSON-ready dict: case, assumptions, normalisation and each part as text and LaTeX."""
        import sympy as sp

        return {
            "origin": self.origin,
            "end": self.end,
            "soma_parameter": self.soma_parameter,
            "name": self.name,
            "assumptions": list(self.assumptions),
            "normalisation": dict(NORMALISATION),
            "parts": [
                {
                    "label": label,
                    "text": sp.pretty(_display(eq, for_latex=False, unicode=True), use_unicode=True,
                                      wrap_line=False),
                    "latex": _latex(eq),
                    "sympy": sp.srepr(eq),
                }
                for label, eq in self.parts(part)
            ],
        }


_ASCII = {"τm": "tau_m", "λ": "lambda", "τ": "tau", "ρ": "rho", "α": "alpha", "φ": "phi", "∞": "inf", "√": "sqrt",
          "·": "*", "²": "^2", "−": "-", "∂": "d", "→": "->", "Σ": "sum", "≥": ">=", "≤": "<=",
          "ℓ": "l", "₀": "0", "ₙ": "_n", "ₘ": "m", "V̂": "V^", "Ω": "ohm", "µ": "u"}


def to_ascii(text: str) -> str:
    """Spell Greek letters and symbols of ``text`` in ASCII (for terminals without Unicode)."""
    for k, v in _ASCII.items():
        text = text.replace(k, v)
    return text.encode("ascii", "replace").decode("ascii")


def _display(expr: Any, *, for_latex: bool, unicode: bool) -> Any:
    """Swap ``sqrt(s + 1)`` for q and ρ∞'s internal name for a readable one (display only)."""
    import sympy as sp

    s = _symbol("s")
    shown = expr.subs(sp.sqrt(s + 1), _symbol("q"))
    if not for_latex:
        rho_inf = _symbol("rho_inf")
        shown = shown.subs(rho_inf, sp.Symbol("ρ_∞" if unicode else "rho_inf", positive=True))
    return shown


def _latex(expr: Any) -> str:
    import sympy as sp

    text = sp.latex(_display(expr, for_latex=True, unicode=True), symbol_names=_latex_names())
    return text.replace(r"\operatorname{V̂}", r"\hat{V}")


@functools.cache
def _latex_names() -> dict[Any, str]:
    return {_symbol("rho_inf"): r"\rho_\infty", _symbol("X0"): "X_0"}


# --------------------------------------------------------------------------------------
# numeric evaluation of derived expressions
# --------------------------------------------------------------------------------------
def to_numeric(expr: Any, variables: Sequence[Any], modules: str = "numpy") -> Callable[..., Any]:
    """Turn a derived sympy expression into a numeric function of ``variables``.

    Parameters
    ----------
    expr : a sympy expression (e.g. ``derive().steady_state``)
    variables : symbols or canonical names (``"X"``, ``"L"``, ``"B"``, ``"X0"``, ``"rho"``,
        ``"rho_inf"``, ``"alpha"``, ``"s"``, ``"T"``), in the order of the function's arguments
    modules : ``"numpy"`` (arrays, float64) or ``"mpmath"`` (arbitrary precision, scalars)

    Returns
    -------
    A function ``f(*values)``.

    Raises
    ------
    InputError
        if ``expr`` contains a symbol that is not among ``variables`` (named in the message),
        or ``modules`` is unknown.

    Notes
    -----
    The expressions are written for reading (cosh, sinh), so for long cables (L ≳ 300) the
    numpy version overflows; the numeric modules use stable forms. Use ``"mpmath"`` there.
    """
    import sympy as sp

    if modules not in ("numpy", "mpmath"):
        raise InputError(f"modules: {modules!r} is not 'numpy' or 'mpmath'")
    if not isinstance(expr, sp.Basic):
        # never parse text: expressions come from :func:`derive`, not from users
        raise InputError(f"to_numeric: expected a sympy expression, got {type(expr).__name__}")
    by_name = {_canonical_name(sym): sym for sym in expr.free_symbols}
    args = []
    for var in variables:
        if isinstance(var, str):
            args.append(by_name.get(var, _symbol(var) if var in _SYMBOL_SPECS else sp.Symbol(var)))
        else:
            args.append(var)
    unbound = expr.free_symbols - set(args)
    if unbound:
        names = ", ".join(sorted(_canonical_name(u) for u in unbound))
        raise InputError(f"to_numeric: expression still contains unbound symbol(s) {names}; "
                         "list them in variables")
    return sp.lambdify(args, expr, modules=modules)


# --------------------------------------------------------------------------------------
# the derivations
# --------------------------------------------------------------------------------------
def derive(origin: str = "current", end: str = "sealed", *, soma_parameter: str = "rho",
           part: str = "all") -> Derivation:
    """Derive steady state, modes and Laplace-domain solution for one cylinder.

    Parameters
    ----------
    origin : ``"current"`` (current injected at a sealed origin), ``"clamp"`` (voltage clamp
        at X = 0) or ``"soma"`` (lumped soma with the same τm, current into the soma)
    end : ``"sealed"``, ``"killed"`` or ``"leaky"`` (ratio B) at X = L
    soma_parameter : for a soma, express it through Rall's ``"rho"`` = G_D/G_S or through
        ``"rho_inf"`` = G∞/G_S (ignored otherwise)
    part : one of :data:`PARTS` to derive only that part (the fields of the others are ``None``,
        and :meth:`Derivation.parts` refuses them; ``"steady"`` takes a fifth of the time), or
        ``"all"``

    Returns
    -------
    Derivation (cached: the same object for the same arguments).

    References
    ----------
    Rall W (1969) Biophys. J. 9:1483 (eigenfunctions, time constants; ball and stick);
    Jack JJB, Noble D & Tsien RW (1975) Electric Current Flow in Excitable Cells, ch. 3-4
    (recalled from memory); Durand D (1984) Biophys. J. 46:645 (lumped soma, recalled from memory).
    """
    if origin not in ORIGINS:
        raise InputError(f"origin: {origin!r} is not one of {', '.join(ORIGINS)}")
    if end not in ENDS:
        raise InputError(f"end: {end!r} is not one of {', '.join(ENDS)}")
    if part != "all" and part not in PARTS:
        raise InputError(f"part: {part!r} is not one of {', '.join((*PARTS, 'all'))}")
    if origin == "soma":
        if soma_parameter not in SOMA_PARAMETERS:
            raise InputError(f"soma_parameter: {soma_parameter!r} is not one of {', '.join(SOMA_PARAMETERS)}")
        return _derive(origin, end, soma_parameter, part)
    return _derive(origin, end, None, part)


class _Problem:
    """The time-domain problem in V(X, T) and its three reductions (steady, modes, Laplace)."""

    def __init__(self, origin: str, end: str) -> None:
        import sympy as sp

        self.sp = sp
        self.origin, self.end = origin, end
        X, T, L, B = (_symbol(n) for n in ("X", "T", "L", "B"))
        self.X, self.T, self.L, self.B = X, T, L, B
        self.v = sp.Function("V")
        V = self.v(X, T)
        self.V = V
        self.drive = sp.Heaviside(T)  # unit step at the origin (current or clamp voltage)
        # cable equation: ∂V/∂T - ∂²V/∂X² + V = 0
        self.pde = sp.Derivative(V, T) - sp.Derivative(V, (X, 2)) + V
        if origin == "current":  # -∂V/∂X = I at X = 0 (axial current into the cable)
            self.origin_expr = -sp.Derivative(V, X)
        elif origin == "clamp":
            self.origin_expr = V
        else:  # soma: I = G_S (V + τm ∂V/∂t) + axial current, divided by G∞
            self.origin_expr = (V + sp.Derivative(V, T)) / _symbol("rho_inf") - sp.Derivative(V, X)
        self.end_expr = {"sealed": sp.Derivative(V, X), "killed": V,
                         "leaky": sp.Derivative(V, X) + B * V}[end]

    # -- reductions: each maps an expression in V(X,T) to one in a function of X only --------
    def steady(self, expr: Any, w: Any) -> Any:
        sp = self.sp
        out = expr.subs(self.drive, 1).replace(self.v, sp.Lambda((self.X, self.T), w(self.X)))
        return out.doit()

    def separated(self, expr: Any, phi: Any) -> Any:
        sp = self.sp
        a = _symbol("alpha")
        decay = sp.exp(-(1 + a**2) * self.T)
        out = expr.subs(self.drive, 0).replace(self.v, sp.Lambda((self.X, self.T), phi(self.X) * decay))
        return sp.expand(sp.powsimp(out.doit() / decay))

    def laplace(self, expr: Any, u: Any, *, drive: bool) -> Any:
        sp = self.sp
        s, X, T = _symbol("s"), self.X, self.T
        e = expr if drive else expr.subs(self.drive, 0)
        out = sp.laplace_transform(e, T, s, noconds=True)
        LT = sp.LaplaceTransform
        out = out.subs({
            LT(sp.Derivative(self.V, (X, 2)), T, s): u(X).diff(X, 2),
            LT(sp.Derivative(self.V, X), T, s): u(X).diff(X),
            LT(self.V, T, s): u(X),
        })
        return out.subs(self.v(X, 0), 0)  # the cable starts at rest


def _eq_at(expr: Any, f: Any, candidate: Any, X: Any, where: Any) -> Any:
    """Substitute ``f(X) -> candidate`` in ``expr``, differentiate, and evaluate at X = where."""
    import sympy as sp

    return expr.replace(f, sp.Lambda(X, candidate)).doit().subs(X, where)


def _basis(general: Any, X: Any, functions: Sequence[Any], ode: Any, f: Any) -> None:
    """Check that ``functions`` solve ``ode`` and span the same space as dsolve's ``general``."""
    import sympy as sp

    for g in functions:
        residual = sp.expand(_eq_at(ode, f, g, X, X))
        if residual != 0:
            raise DerivationError(f"basis function {g} does not solve {ode}")
    wronskian = sp.simplify(sp.expand(sp.wronskian(list(functions), X)).rewrite(sp.exp))
    if wronskian == 0:
        raise DerivationError("basis functions are linearly dependent")
    if len(general.free_symbols - {X} - ode.free_symbols) < 2:
        raise DerivationError(f"dsolve gave no two-constant general solution: {general}")


@functools.cache
def _derive(origin: str, end: str, soma_parameter: str | None, part: str = "all") -> Derivation:
    import sympy as sp

    if soma_parameter == "rho":
        return _rho_form(_derive(origin, end, "rho_inf", part))
    if part != "all" and (origin, end, soma_parameter, "all") in _ALL_DONE:
        return _derive(origin, end, soma_parameter, "all")  # already derived in full: reuse it
    wanted = PARTS if part == "all" else (part,)
    P = _Problem(origin, end)
    X, T, L = P.X, P.T, P.L
    X0 = _symbol("X0")
    rho_inf = _symbol("rho_inf")
    k1, k2 = sp.symbols("k1 k2")
    soma_weight = 1 / rho_inf if origin == "soma" else 0  # soma capacitance / (c_m λ) = G_S/G∞

    # ---- steady state: solve w'' - w = 0 with the boundary conditions ---------------------
    w = sp.Function("w")
    ode_ss = P.steady(P.pde, w)
    general = sp.dsolve(ode_ss, w(X)).rhs
    far = (sp.cosh(L - X), sp.sinh(L - X))  # a basis adapted to the end X = L
    near = (sp.cosh(X), sp.sinh(X))  # ... and to the origin
    _basis(general, X, far, ode_ss, w)
    _basis(general, X, near, ode_ss, w)
    trial = k1 * far[0] + k2 * far[1]
    origin_ss = P.steady(P.origin_expr - P.drive, w)
    end_ss = P.steady(P.end_expr, w)
    sol = sp.solve([_eq_at(origin_ss, w, trial, X, 0), _eq_at(end_ss, w, trial, X, L)], [k1, k2], dict=True)[0]
    steady_state = _tidy(trial.subs(sol))

    # ---- point source at X0 (steady Green's function) ----------------------------------
    k3, k4 = sp.symbols("k3 k4")
    point_source = None
    if "point" in wanted:
        left = k1 * near[0] + k2 * near[1]
        right = k3 * far[0] + k4 * far[1]
        origin_hom = P.steady(P.origin_expr, w)
        conditions = [
            _eq_at(origin_hom, w, left, X, 0),
            _eq_at(end_ss, w, right, X, L),
            (left - right).subs(X, X0),  # continuity of V
            (sp.diff(left, X) - sp.diff(right, X)).subs(X, X0) - 1,  # -[∂V/∂X] = injected current
        ]
        sol = sp.solve(conditions, [k1, k2, k3, k4], dict=True)[0]
        point_source = _wronskian_form(sp.Piecewise((left.subs(sol), X <= X0), (right.subs(sol), True)))
    modes = _modes(P, steady_state, soma_weight) if "modes" in wanted else dict.fromkeys(
        ("eigenfunction", "eigenvalue_equation", "zero_mode", "mode_norm", "coefficient",
         "zero_mode_coefficient", "impulse_coefficient"))
    laplace = laplace_point_source = None
    if "laplace" in wanted or "point" in wanted:
        laplace, laplace_point_source = _laplace(P, k1, k2, k3, k4)

    # ---- time-domain statement of the problem, for display -----------------------------
    drive_text = sp.Function("I")(T) if origin != "clamp" else sp.Function("V_c")(T)
    origin_condition = sp.Eq(P.origin_expr, drive_text)
    end_condition = sp.Eq(P.end_expr, 0)
    equation = sp.Eq(sp.Derivative(P.V, T), sp.Derivative(P.V, (X, 2)) - P.V)

    name = f"Passive cylinder: {_ORIGIN_TEXT[origin]}; {_END_TEXT[end]}"
    assumptions = list(ASSUMPTIONS)
    if origin == "soma":
        assumptions.append("the soma is isopotential and has the same membrane time constant τm")
    fields = {
        "steady_state": steady_state, "point_source": point_source, **modes,
        "laplace": laplace if "laplace" in wanted else None,
        "laplace_point_source": laplace_point_source if "point" in wanted else None,
        "origin_condition": origin_condition,
    }
    if soma_parameter == "rho_inf":
        assumptions.append("ρ∞ = G∞/G_S")
        name += " (parameter ρ∞ = G∞/G_S)"
    if part == "all":
        _ALL_DONE.add((origin, end, soma_parameter, "all"))
    return Derivation(
        origin=origin, end=end, soma_parameter=soma_parameter, name=name,
        assumptions=tuple(assumptions), equation=equation, end_condition=end_condition, derived=wanted, **fields,
    )


_ALL_DONE: set[tuple[str, str, str | None, str]] = set()  # full derivations made (and cached) so far


def _modes(P: _Problem, steady_state: Any, soma_weight: Any) -> dict[str, Any]:
    """The modes: eigenfunction, eigenvalue equation, zero mode, norm and coefficients."""
    import sympy as sp

    X, L = P.X, P.L
    X0, a = _symbol("X0"), _symbol("alpha")
    # ---- modes: V = φ(X) e^{-(1+α²)T}, φ'' + α² φ = 0 ------------------------------------
    phi = sp.Function("phi")
    ode_modes = P.separated(P.pde, phi)
    general = sp.dsolve(ode_modes, phi(X)).rhs
    c_sin, c_cos = sorted(general.free_symbols - {X, a}, key=str)
    origin_modes = P.separated(P.origin_expr, phi)
    end_modes = P.separated(P.end_expr, phi)
    at_origin = _eq_at(origin_modes, phi, general, X, 0)
    unknown = c_sin if at_origin.has(c_sin) else c_cos
    shape = general.subs(unknown, sp.solve(at_origin, unknown)[0])
    free = shape.free_symbols & {c_sin, c_cos}
    eigenfunction = sp.expand(shape.subs(dict.fromkeys(free, 1)))
    if eigenfunction.subs(X, 0) == 0:  # a clamp: scale so that φ'(0) = α
        eigenfunction = sp.expand(eigenfunction * a / sp.diff(eigenfunction, X).subs(X, 0))
    raw_equation = _eq_at(end_modes, phi, eigenfunction, X, L)
    eigenvalue_equation = _clean_equation(raw_equation, a)

    # α = 0: φ'' = 0, solved on its own (the sin/cos basis degenerates there)
    zero_mode = _zero_mode(P, phi, X, L, a)

    # orthogonality integral (with the soma's point capacitance as weight at X = 0)
    mode_norm = _tidy(sp.integrate(sp.expand(eigenfunction**2), (X, 0, L))
                      + soma_weight * eigenfunction.subs(X, 0) ** 2)

    # projection of the steady state on φ: Green's identity turns ∫ V_ss φ dX into boundary
    # terms, (1 + α²) ∫ V_ss φ = [V_ss' φ − V_ss φ']_0^L; the term at L vanishes at every
    # eigenvalue because V_ss and φ obey the same end condition (tests check the integral itself)
    bracket0 = (sp.diff(steady_state, X) * eigenfunction - steady_state * sp.diff(eigenfunction, X)).subs(X, 0)
    projection = sp.factor(sp.cancel(-bracket0 / (1 + a**2)
                                     + soma_weight * steady_state.subs(X, 0) * eigenfunction.subs(X, 0)))
    coefficient = _tidy(projection * eigenfunction / mode_norm)
    impulse_coefficient = eigenfunction * eigenfunction.subs(X, X0) / mode_norm
    zero_mode_coefficient = None
    if zero_mode is not None:
        norm0 = sp.integrate(zero_mode**2, (X, 0, L)) + soma_weight * zero_mode.subs(X, 0) ** 2
        bracket = (sp.diff(steady_state, X) * zero_mode - steady_state * sp.diff(zero_mode, X)).subs(X, 0)
        projection0 = -bracket + soma_weight * steady_state.subs(X, 0) * zero_mode.subs(X, 0)
        zero_mode_coefficient = _tidy(projection0 * zero_mode / norm0)

    return {"eigenfunction": eigenfunction, "eigenvalue_equation": eigenvalue_equation, "zero_mode": zero_mode,
            "mode_norm": mode_norm, "coefficient": coefficient, "zero_mode_coefficient": zero_mode_coefficient,
            "impulse_coefficient": impulse_coefficient}


def _laplace(P: _Problem, k1: Any, k2: Any, k3: Any, k4: Any) -> tuple[Any, Any]:
    """The Laplace-domain solutions: a unit step at the origin, and a unit impulse at X0."""
    import sympy as sp

    X, T, L = P.X, P.T, P.L
    X0, s, q = _symbol("X0"), _symbol("s"), _symbol("q")
    # ---- Laplace domain: transform in T, then U'' - q² U = 0 ------------------------------
    u = sp.Function("u")
    ode_lt = P.laplace(P.pde, u, drive=False)
    ode_q = sp.expand(ode_lt.subs(s, q**2 - 1))
    general = sp.dsolve(ode_q, u(X)).rhs
    far_q = (sp.cosh(q * (L - X)), sp.sinh(q * (L - X)))
    near_q = (sp.cosh(q * X), sp.sinh(q * X))
    _basis(general, X, far_q, ode_q, u)
    _basis(general, X, near_q, ode_q, u)
    # a unit impulse at the origin transforms to 1 (the transfer function); a unit step is
    # that times the transform of the Heaviside step, 1/s
    origin_lt_hom = P.laplace(P.origin_expr, u, drive=False).subs(s, q**2 - 1)
    end_lt = P.laplace(P.end_expr, u, drive=False)
    trial = k1 * far_q[0] + k2 * far_q[1]
    sol = sp.solve([_eq_at(origin_lt_hom, u, trial, X, 0) - 1, _eq_at(end_lt, u, trial, X, L)], [k1, k2],
                   dict=True)[0]
    step = sp.laplace_transform(P.drive, T, s, noconds=True)
    laplace = _tidy(trial.subs(sol)).subs(q, sp.sqrt(s + 1)) * step
    left = k1 * near_q[0] + k2 * near_q[1]
    right = k3 * far_q[0] + k4 * far_q[1]
    conditions = [
        _eq_at(origin_lt_hom, u, left, X, 0),
        _eq_at(end_lt, u, right, X, L),
        (left - right).subs(X, X0),
        (sp.diff(left, X) - sp.diff(right, X)).subs(X, X0) - 1,
    ]
    sol = sp.solve(conditions, [k1, k2, k3, k4], dict=True)[0]
    laplace_point_source = _wronskian_form(
        sp.Piecewise((left.subs(sol), X <= X0), (right.subs(sol), True))).subs(q, sp.sqrt(s + 1))

    return laplace, laplace_point_source



_SYMBOLIC_FIELDS = ("steady_state", "point_source", "eigenfunction", "eigenvalue_equation", "zero_mode",
                    "mode_norm", "coefficient", "zero_mode_coefficient", "impulse_coefficient", "laplace",
                    "laplace_point_source", "origin_condition")


def _rho_form(base: Derivation) -> Derivation:
    """Re-express a soma derivation through Rall's ρ = G_D/G_S instead of ρ∞ = G∞/G_S.

    ρ∞ = G∞/G_S = ρ · G∞/G_D, and G∞/G_D is the derived steady input resistance (in units
    of R∞) of the same cylinder with a current input at a sealed origin.
    """
    import dataclasses

    import sympy as sp

    X, a, rho, rho_inf = (_symbol(n) for n in ("X", "alpha", "rho", "rho_inf"))
    r_in = _derive("current", base.end, None, "steady").steady_state.subs(X, 0)
    fields: dict[str, Any] = {
        k: (None if getattr(base, k) is None else _tidy(getattr(base, k).subs(rho_inf, rho * r_in)))
        for k in _SYMBOLIC_FIELDS}
    if fields["eigenvalue_equation"] is not None:
        fields["eigenvalue_equation"] = _clean_equation(fields["eigenvalue_equation"], a)
    assumptions = [*base.assumptions[:-1], "ρ = G_D/G_S, G_D the steady input conductance of the cylinder"]
    return dataclasses.replace(
        base, **fields, soma_parameter="rho",
        name=base.name.replace("(parameter ρ∞ = G∞/G_S)", "(parameter ρ = G_D/G_S)"),
        assumptions=tuple(assumptions), soma_relation=sp.Eq(rho_inf, _tidy(rho * r_in)), shown_as=base)


def _tidy(expr: Any, *, deep: bool = False) -> Any:
    """Cheap tidying (one fraction, common factors out); sympy's simplify is far too slow here."""
    import sympy as sp

    if isinstance(expr, sp.Piecewise):
        return sp.Piecewise(*[(_tidy(e, deep=deep), c) for e, c in expr.args])
    if isinstance(expr, sp.Eq):
        return sp.Eq(_tidy(expr.lhs, deep=deep), _tidy(expr.rhs, deep=deep))
    out = sp.factor_terms(sp.cancel(sp.together(expr))) if deep else sp.factor_terms(sp.together(expr))
    return out


def _wronskian_form(green: Any) -> Any:
    """Tidy a two-sided Green's function, evaluating its common denominator at X0 = 0.

    The denominator is the Wronskian of the solution that meets the origin condition and the
    one that meets the end condition; by Abel's identity it does not depend on X0 (for
    V'' = q²V), so X0 = 0 gives the same value in a shorter form. The claim is checked
    numerically at two points before it is used.
    """
    import sympy as sp

    X0 = _symbol("X0")
    pieces = []
    for expr, cond in green.args:
        num, den = sp.fraction(_tidy(expr))
        den0 = sp.factor_terms(sp.expand(den.subs(X0, 0)))
        probe = {sym: sp.Rational(3, 7) + k * sp.Rational(1, 5) for k, sym in
                 enumerate(sorted(den.free_symbols, key=str))}
        for shift in (0, sp.Rational(1, 11)):
            values = {k: v + shift for k, v in probe.items()}
            values[X0] = values.get(X0, 0) / 2
            if abs(sp.N((den - den0).subs(values), 30)) > 1e-20:
                raise DerivationError(f"denominator {den} depends on X0")
        pieces.append((sp.factor_terms(num) / den0, cond))
    return sp.Piecewise(*pieces)


def _clean_equation(expr: Any, a: Any) -> Any:
    """Numerator of ``expr`` with denominators cleared and constant or α-power factors dropped."""
    import sympy as sp

    numer, _ = sp.fraction(sp.together(sp.expand(expr)))
    numer = sp.factor_terms(sp.expand(numer))
    if numer.is_Mul:
        kept = [f for f in numer.args if not (f.is_number or f == a or (f.is_Pow and f.base == a))]
        numer = sp.Mul(*kept)
    numer = sp.expand(numer)
    # present the equation with a positive coefficient on its first term
    lead = sp.Add.make_args(numer)[0]
    if lead.as_coeff_Mul()[0] < 0:
        numer = -numer
    return numer


def _zero_mode(P: _Problem, phi: Any, X: Any, L: Any, a: Any) -> Any:
    """φ_0 for α = 0 if the homogeneous problem has a non-zero solution there, else None."""
    import sympy as sp

    ode0 = P.separated(P.pde, phi).subs(a, 0)
    general = sp.dsolve(ode0, phi(X)).rhs
    consts = sorted(general.free_symbols - {X}, key=str)
    eqs = [_eq_at(P.separated(P.origin_expr, phi).subs(a, 0), phi, general, X, 0),
           _eq_at(P.separated(P.end_expr, phi).subs(a, 0), phi, general, X, L)]
    matrix, _ = sp.linear_eq_to_matrix(eqs, consts)
    null = matrix.nullspace()
    if not null:
        return None
    mode = sp.expand(general.subs(dict(zip(consts, null[0], strict=True))))
    return _tidy(mode / mode.subs(X, 0))

