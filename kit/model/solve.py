"""Exact numeric operating points: vectorised damped Newton on the exact equations.

Thousands of points (a Monte Carlo run, a sweep) solve at once as arrays.
Each Newton step is limited so that no forward-biased junction moves by more
than :data:`JUNCTION_STEP` volts, the classic guard against the exponential
overshooting.  Every point reports whether it converged; a point that did
not is never returned as a valid current (:meth:`OperatingPoints.require`).

Starting points.  A topology may declare starting voltages for its unknowns
(compiled with its equations, from a closed form and the device laws
inverted).  Otherwise — and for every point that does not converge from its
declared start — the solve continues from the trivial state: every rail
voltage and reference current is stepped up from a small fraction of its
value, each step starting from the last (source stepping, a generic
continuation that needs nothing of the circuit but its equations).

Every part's regions and limits are its kind's own
(:meth:`kit.devices.base.DeviceKind.regions`), judged from the solved
node voltages.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property, lru_cache

import numpy as np

from kit.errors import ConvergenceError, ParameterError

JUNCTION_STEP = 0.1  # V per Newton step for a junction that is forward biased
NODE_STEP = 2.0  # V per Newton step for any node
STEP_TOLERANCE = 1e-12  # relative; plus an absolute 1e-14 V
MAX_ITERATIONS = 200
RESIDUAL_FLOOR = 1e-15  # A
EDGES = ("vce_sat", "vcb_zero")
# Source stepping: fractions of the rails and reference currents, each solved
# from the last (a few Newton iterations each suffice on the way).
STEPPING = (0.02, 0.05, 0.1, 0.2, 0.35, 0.5, 0.7, 0.85, 1.0)
STEPPING_ITERATIONS = 40


def check_edge(edge):
    """Refuse an unknown saturation criterion."""
    if edge not in EDGES:
        raise ParameterError("unknown saturation edge", parameter="edge", value=edge,
                             valid=" or ".join(EDGES))


@dataclass(repr=False)
class OperatingPoints:
    """Solved operating points of one compiled model (arrays over N points).

    Attributes
    ----------
    model : kit.model.compiled.CompiledModel
    p, q, x : ndarray
        Parameters (P, N), operating values (M, N) and node voltages (n, N).
    converged : ndarray of bool, shape (N,)
    iterations : ndarray of int, shape (N,)
    """

    model: object
    p: np.ndarray
    q: np.ndarray
    x: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray

    def __repr__(self):
        # A sweep of thousands of points: say what it is, not every array.
        done = int(np.count_nonzero(self.converged))
        return f"<OperatingPoints: {self.size} points, {done} converged>"

    @property
    def size(self):
        return self.x.shape[1]

    def take(self, pick):
        """The points ``pick`` (a slice or an index array) as OperatingPoints of their own.

        Their own copies of ``p, q, x``, ``converged`` and ``iterations``;
        everything derived is computed afresh from them.

        Examples
        --------
        >>> import kit
        >>> from kit.analysis.evaluation import sweep
        >>> pts = sweep(kit.design("divider_source"), "v_load", [4.0, 8.0, 9.0])
        >>> two = pts.take(slice(1, 3))
        >>> two.size, float(two.i_out[0]) == float(pts.i_out[1])
        (2, True)
        """
        return OperatingPoints(self.model, self.p[:, pick].copy(), self.q[:, pick].copy(), self.x[:, pick].copy(),
                               self.converged[pick].copy(), self.iterations[pick].copy())

    @cached_property
    def i_out(self):
        """Output current in A, positive in the topology's sense."""
        return self.model.output(self.x, self.q)

    @cached_property
    def junctions(self):
        """Part name -> dict of its exported quantities (``v_be, i_c, ...``)."""
        return self.model.junctions(self.x, self.q)

    @property
    def temp(self):
        return self.p[self.model.parameter_index["temp"]]

    @cached_property
    def dissipation(self):
        """Device name -> power in W (for a BJT ``V_CE I_C + V_BE I_B``)."""
        return {part.name: part.kind.dissipation(self.junctions[part.name])
                for part in self.model.structure.devices}

    def regions(self, edge="vce_sat"):
        """Device name -> array of region names (each kind's own words)."""
        check_edge(edge)
        return {part.name: part.kind.regions(self.junctions[part.name], self.model.params(self.p, part),
                                             self.temp, edge)
                for part in self.model.structure.devices}

    def in_good_region(self, edge="vce_sat"):
        """Boolean array: every device in the region its kind needs."""
        good = np.ones(self.size, dtype=bool)
        kinds = {part.name: part.kind for part in self.model.structure.devices}
        for name, region in self.regions(edge).items():
            good &= region == kinds[name].good_region
        return good

    def margins(self, edge="vce_sat"):
        """``(part, cause) -> margin`` (>= 0 inside) of every part, then ``(None, "solve")``.

        Transistors come first (their causes name an edge before a
        reference's headroom at a tie); a point that did not converge gets
        ``-inf`` under cause ``"solve"``.
        """
        check_edge(edge)
        parts = sorted(self.model.parts, key=lambda part: part.kind.key not in ("bjt", "mos", "jfet"))
        out = {}
        for part in parts:
            j = self.junctions[part.name]
            for cause, margin in part.kind.margins(j, self.model.params(self.p, part), self.temp,
                                                   edge).items():
                out[part.name, cause] = margin
            # A law outside its domain is outside every limit (margin -inf there);
            # a point that did not converge (NaN) is judged by the solver's own margin.
            for param, (_, margin) in self.domain(part).items():
                out[part.name, param] = np.where((margin > 0) | np.isnan(margin), np.inf, -np.inf)
        out[None, "solve"] = np.where(self.converged, np.inf, -np.inf)
        return out

    def domain(self, part):
        """``parameter -> (law in words, margin)`` of one part's laws at these points (> 0 inside)."""
        return part.kind.domain(self.junctions[part.name], self.model.operating_of(part, self.q))

    def margin_table(self, edge="vce_sat"):
        """``(keys, table)``: the keys of :meth:`margins` in order and their margins stacked, (K, N)."""
        margins = self.margins(edge)
        keys = list(margins)
        table = np.empty((len(keys), self.size))
        for row, key in zip(table, keys):
            row[...] = margins[key]  # broadcasts a scalar margin; cheaper than broadcast_to + stack
        return keys, table

    def worst_margin(self, edge="vce_sat"):
        """Smallest margin at each point and its ``(part, cause)`` key."""
        return worst_of(*self.margin_table(edge))

    def cause_text(self, part, cause):
        """How the report words ``cause`` of ``part``."""
        if part is None:
            return "has no converged operating point"
        return self.model.structure.part(part).kind.cause_text(cause)

    @cached_property
    def _gradients(self):
        m = self.model
        jx = np.moveaxis(m.jacobian_x(self.x, self.q), -1, 0)  # (N, n, n)
        jq = np.moveaxis(m.jacobian_q(self.x, self.q), -1, 0)  # (N, n, M)
        dx_dq = -_batched_solve(jx, jq)
        d_x, d_q = m.output_gradients(self.x, self.q)
        di_dq = d_q.T + np.einsum("ni,nim->nm", d_x.T, dx_dq)  # (N, M)
        dq_dp = m.dq_dp(self.p)  # (M, P, N)
        di_dp = np.einsum("nm,mpn->np", di_dq, dq_dp)
        return di_dq.T, di_dp.T, dq_dp

    @property
    def di_dq(self):
        """Exact dI_out/dq (M, N) over the operating values (implicit function theorem)."""
        return self._gradients[0]

    @property
    def di_dp(self):
        """Exact dI_out/dp (P, N) over the designer's parameters."""
        return self._gradients[1]

    @property
    def dq_dp(self):
        return self._gradients[2]

    @property
    def r_out(self):
        """Exact small-signal output resistance in Ω, from dI_out/dV_load."""
        slope = self.di_dq[self.model.load_index]
        with np.errstate(divide="ignore"):
            return np.where(slope != 0, self.model.output_sign / slope, np.inf)

    def require(self, what="operating point"):
        """Raise :class:`ConvergenceError` if any point did not converge."""
        bad = np.flatnonzero(~self.converged)
        if bad.size:
            raise ConvergenceError(
                f"the exact solve did not converge at {bad.size} of {self.size} points "
                f"(first: point {bad[0]})", parameter=what)
        return self


def worst_of(keys, table):
    """``(smallest margin, its key)`` at each point of a :meth:`OperatingPoints.margin_table`."""
    worst = table.argmin(axis=0)
    return table[worst, np.arange(table.shape[1])], [keys[i] for i in worst]


def check_laws(model, values):
    """Refuse parameters under which a part's temperature law leaves its domain.

    A current gain ``β_F(T)`` or a zener voltage ``V_Z(T)`` that reaches zero
    at the temperature of the point (the junction's, self-heating included)
    makes a law without physical meaning; the error names the part's
    parameter, the junction temperature and the value there.

    Raises
    ------
    kit.errors.ParameterError
    """
    p = parameter_array(model, values)
    q = model.operating(p)
    temp = p[model.parameter_index["temp"]]
    t_ref = p[model.parameter_index["t_ref"]]
    for part in model.structure.parts:
        # R (1 + TCR (T - T_ref)) must stay positive: a TCR far from zero over a
        # wide span reaches zero (and the solve would meet a negative resistor).
        tcr = model.parameter_index.get(f"tcr_{part.value}") if part.value else None
        if tcr is None:
            continue
        factor = 1.0 + p[tcr] * (temp - t_ref)
        bad = np.flatnonzero(~(factor > 0))
        if bad.size:
            k = bad[0]
            raise ParameterError(
                f"{part.value} (1 + TCR (T − T_ref)) ≤ 0 at T = {temp[k]:.4g} K: a negative resistance",
                parameter=f"tcr_{part.value}", value=float(p[tcr][k]),
                valid=f"|TCR| < {1.0 / abs(temp[k] - t_ref[k]):.3g} 1/K for this temperature span")
    for part in model.structure.devices:
        ops = model.operating_of(part, q)
        if not ops:
            continue
        rise = model.parameter_index.get(f"{part.name}.t_rise")
        junction = temp + (p[rise] if rise is not None else 0.0)
        for param, (law, margin) in part.kind.domain({}, ops).items():
            bad = np.flatnonzero(~(margin > 0))
            if bad.size:
                k = bad[0]
                name = f"{part.name}.{param}"
                raise ParameterError(
                    f"{law} fails at T = {junction[k]:.4g} K ({junction[k] - 273.15:.4g} °C): "
                    f"the law gives {margin[k]:.4g} there",
                    parameter=name, value=float(p[model.parameter_index[name]][k])
                    if name in model.parameter_index else None,
                    valid=f"a value that keeps {law} at every temperature of the design")


def _batched_solve(a, b):
    """Solve ``a @ x = b`` for stacks of matrices; fall back to least squares if singular.

    Stacks of 1x1 and 2x2 systems (most single-transistor sources) are solved
    in closed form: LAPACK's per-matrix overhead dominates at that size.
    """
    n = a.shape[1]
    if n <= 2:
        det = a[:, 0, 0] if n == 1 else a[:, 0, 0] * a[:, 1, 1] - a[:, 0, 1] * a[:, 1, 0]
        if np.all(det != 0):
            if n == 1:
                return b / a[:, :1, :1]
            inverse = np.empty_like(a)
            inverse[:, 0, 0], inverse[:, 1, 1] = a[:, 1, 1] / det, a[:, 0, 0] / det
            inverse[:, 0, 1], inverse[:, 1, 0] = -a[:, 0, 1] / det, -a[:, 1, 0] / det
            return inverse @ b
    try:
        return np.linalg.solve(a, b)
    except np.linalg.LinAlgError:
        out = np.full(a.shape[:1] + a.shape[2:3] + b.shape[2:], np.nan)
        for k in range(a.shape[0]):
            # A matrix with a NaN or inf (a diverged point) has no least-squares
            # answer either (LAPACK's SVD fails on it): leave NaN, the caller
            # marks that point unconverged.
            if np.all(np.isfinite(a[k])) and np.all(np.isfinite(b[k])):
                out[k] = np.linalg.lstsq(a[k], b[k], rcond=None)[0]
        return out


def parameter_array(model, values, size=None):
    """Stack a name -> scalar-or-array mapping into the (P, N) parameter array.

    Every parameter of the model must be present; arrays broadcast together.
    """
    missing = [n for n in model.parameter_names if n not in values]
    if missing:
        raise ParameterError("missing parameter", parameter=missing[0],
                             valid="all of " + ", ".join(model.parameter_names))
    # Most values are plain numbers: only the arrays need converting (this runs before every solve).
    columns = [values[n] if isinstance(values[n], (int, float)) else np.asarray(values[n], dtype=float)
               for n in model.parameter_names]
    shape = np.broadcast_shapes(*(c.shape for c in columns if isinstance(c, np.ndarray)),
                                () if size is None else (size,))
    if len(shape) > 1:
        raise ParameterError("parameter arrays must be one-dimensional", parameter="values")
    shape = shape or (1,)
    p = np.empty((len(columns),) + shape)
    for row, column in zip(p, columns):
        row[...] = column  # broadcasts; cheaper than broadcast_to + stack
    finite = np.isfinite(p)
    if finite.all():  # the common case, checked at once (this runs before every solve)
        return p
    # An ideal part (V_A = +inf) or an unrated resistor: +inf where allowed, checked at once too.
    if (finite | (np.isposinf(p) & _infinite_allowed(model)[:, None])).all():
        return p
    for name, row in zip(model.parameter_names, p):
        if not np.all(np.isfinite(row) | (np.isposinf(row) & _may_be_infinite(name))):
            raise ParameterError("must be finite", parameter=name, value=float(row[~np.isfinite(row)][0]))
    return p


def check_drift(model, values):
    """Refuse a point at which a rail, a reference current or a resistance has drifted through zero.

    A linear temperature law ``X (1 + tc (T - T_ref))`` holds near ``T_ref``;
    a large coefficient far from it would carry the value through zero (a
    reference current that reverses, a resistor below 0 Ω), which no real part
    does.  The error names the coefficient and the range that keeps the sign.

    Parameters
    ----------
    model : kit.model.compiled.CompiledModel
    values : dict
        Every parameter name -> float (one design point).

    Examples
    --------
    >>> import kit
    >>> from kit.model.compiled import compile_model
    >>> d = kit.design("basic_mirror", i_ref_tc=-0.01, temp=450)
    >>> check_drift(compile_model(d.topology, d.polarity), d.parameters())  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    kit.errors.ParameterError: i_ref_tc = -0.01: I_REF drifts through zero ... (valid: > -0.006585 1/K at temp = 450 K)
    """
    q = model.operating(parameter_array(model, values))[:, 0]
    reference = model.operating(parameter_array(model, values | {"temp": values["t_ref"]}))[:, 0]
    watched = list(model.manifest["sources"])
    watched += [model.operating_index[part.name] for part in model.structure.parts
                if part.kind.key == "resistor" and part.name in model.operating_index]
    feeds = {}
    for j, k in model.manifest["dq_dp"]:
        feeds.setdefault(j, []).append(model.parameter_names[k])
    rise = values["temp"] - values["t_ref"]
    for j in watched:
        # signs, not a product: a tiny value squared underflows to zero
        if reference[j] != 0 and np.sign(q[j]) != np.sign(reference[j]):
            coefficient = next((n for n in feeds.get(j, ()) if n.endswith("_tc") or n.startswith("tcr_")), "temp")
            limit = -1.0 / rise if rise else math.inf
            valid = (f"> {limit:.4g} 1/K at temp = {values['temp']:.5g} K" if rise > 0
                     else f"< {limit:.4g} 1/K at temp = {values['temp']:.5g} K")
            raise ParameterError(f"{model.operating_names[j]} drifts through zero at the point's temperature",
                                 parameter=coefficient, value=values.get(coefficient), valid=valid)


def _may_be_infinite(name):
    # An ideal Early voltage, an unrated resistor.
    return name.endswith(".v_a") or name.startswith("p_rated_")


@lru_cache(maxsize=None)
def _infinite_allowed(model):
    """Boolean row mask of the parameters that may be +inf (see :func:`_may_be_infinite`)."""
    return np.array([_may_be_infinite(name) for name in model.parameter_names], dtype=bool)


def solve_points(model, values, *, x0=None, max_iterations=MAX_ITERATIONS, retry=True):
    """Exact operating points for parameter values (arrays broadcast together).

    Parameters
    ----------
    model : kit.model.compiled.CompiledModel
    values : dict
        Every parameter name -> scalar or 1-D array.
    x0 : ndarray, optional
        Starting node voltages (n, N); default the declared start, else
        source stepping.
    max_iterations : int
        Newton steps per point (each point iterates on its own: one that
        converges within a smaller cap ends exactly where it would with a larger).
    retry : bool
        Retry points whose declared start failed by source stepping.

    Returns
    -------
    OperatingPoints
    """
    p = parameter_array(model, values)
    q = model.operating(p)
    size = p.shape[1]
    n = len(model.unknowns)
    if x0 is not None:
        x = np.broadcast_to(np.array(x0, dtype=float), (n, size)).copy()
    elif model.started:
        x = np.broadcast_to(model.starts(q), (n, size)).copy()
    else:
        x = _source_stepping(model, q, np.zeros((n, size)))
    x, converged, iterations = _newton(model, x, q, max_iterations)
    if retry and model.started and x0 is None and not converged.all():
        # A declared start that failed: try the generic continuation for those points.
        retry = np.flatnonzero(~converged)
        x_retry = _source_stepping(model, q[:, retry], np.zeros((n, retry.size)))
        x_retry, ok, its = _newton(model, x_retry, q[:, retry], max_iterations)
        x[:, retry[ok]] = x_retry[:, ok]
        converged[retry[ok]] = True
        iterations[retry] += its
    converged &= _confirmed(model, x, q)
    points = OperatingPoints(model, p, q, x, converged, iterations)
    # Self-biased cells also solve at zero current: a topology can refuse that branch.
    if model.has_valid:
        with np.errstate(invalid="ignore"):
            points.converged &= model.valid(x, q)
    return points


def _source_stepping(model, q, x):
    """Continue from the trivial state with every rail and reference stepped up to its value."""
    sources = model.manifest["sources"]
    for fraction in STEPPING:
        stepped = q.copy()
        stepped[sources] *= fraction
        x, _, _ = _newton(model, x, stepped, STEPPING_ITERATIONS)
    return x


def _newton(model, x, q, max_iterations):
    """Damped Newton from ``x``; returns ``(x, converged, iterations)``."""
    size = x.shape[1]
    converged = np.zeros(size, dtype=bool)
    iterations = np.zeros(size, dtype=int)
    pending = np.arange(size)
    x = x.copy()
    for iteration in range(1, max_iterations + 1):
        every = pending.size == size  # no copies while every point is still going
        xs, qs = (x, q) if every else (x[:, pending], q[:, pending])
        step = _newton_step(model, xs, qs)
        done = (np.abs(step) <= STEP_TOLERANCE * np.abs(xs) + 1e-14).all(axis=0)
        updated = xs + step
        if every:
            x = updated
        else:
            x[:, pending] = updated
        finite = np.isfinite(updated).all(axis=0)
        iterations[pending] = iteration
        converged[pending[done & finite]] = True
        pending = pending[~done & finite]
        if pending.size == 0:
            break
    return x, converged, iterations


def _confirmed(model, x, q):
    """Converged steps that also sit on small residuals (a singular Jacobian can stall Newton)."""
    f, jac = model.newton_terms(x, q)
    scale = model.scales(x, q)
    # Rounding of the node voltages themselves: a few ulps of the largest
    # voltage times each node's conductances (a tiny drop under a high rail).
    rounding = 8 * np.finfo(float).eps * np.abs(x).max(axis=0) * np.abs(jac).sum(axis=1)
    # The absolute floor (1 fA) covers a node whose currents are tiny but whose
    # voltage is large (a cut-off device at a high supply).
    return (np.abs(f) <= 1e-9 * scale + rounding + RESIDUAL_FLOOR).all(axis=0)


def _newton_direction(f, jac):
    """The full Newton step ``-J⁻¹ F`` (n, N) from ``F`` (n, N) and ``J`` (n, n, N).

    One and two unknowns (most single-transistor sources) are solved in
    closed form on the point axis, as :func:`_batched_solve` does, without
    moving axes; larger systems (or a singular one) go through it.
    """
    n = f.shape[0]
    if n == 1:
        det = jac[0, 0]
        if (det != 0).all():
            return -(f / det)
    elif n == 2:
        a, b, c, d = jac[0, 0], jac[0, 1], jac[1, 0], jac[1, 1]
        det = a * d - b * c
        if (det != 0).all():
            step = np.empty_like(f)
            step[0] = (d / det) * f[0] + (-b / det) * f[1]
            step[1] = (-c / det) * f[0] + (a / det) * f[1]
            return np.negative(step, out=step)
    return -_batched_solve(np.moveaxis(jac, -1, 0), f.T[..., None])[..., 0].T


def _newton_step(model, x, q):
    f, jac = model.newton_terms(x, q)
    step = _newton_direction(f, jac)
    step = np.where(np.isfinite(step), step, 0.0)
    # Limit the move of junctions that end up forward biased.
    before = model.limited_voltages(x, q)
    after = model.limited_voltages(x + step, q)
    rise = after - before
    limited = (after > 0.3) & (rise > JUNCTION_STEP)
    if limited.any():
        fraction = np.where(limited, JUNCTION_STEP / np.where(limited, rise, 1.0), 1.0).min(axis=0, initial=1.0)
    else:  # the common case near the solution: no junction limited
        fraction = 1.0
    largest = np.abs(step).max(axis=0, initial=0.0)
    fraction = np.minimum(fraction, NODE_STEP / np.maximum(largest, NODE_STEP))
    return step * fraction
