"""Exact numeric operating points: vectorised damped Newton on the exact equations.

Thousands of points (a Monte Carlo run, a sweep) solve at once as arrays.
Each Newton step is limited so that no forward-biased junction moves by more
than :data:`JUNCTION_STEP` volts, the classic guard against the exponential
overshooting.  Every point reports whether it converged; a point that did
not is never returned as a valid current (:meth:`OperatingPoints.require`).

Operating regions use normalised junction voltages (forward bias positive):

``cutoff``     collector current below :data:`kit.devices.bjt.CUTOFF_CURRENT`, v_BC not forward
``reverse``    v_BE below :data:`kit.devices.bjt.CUTOFF_THERMAL_VOLTAGES` V_T, v_BC above it
``saturated``  conducting with V_CE < V_CE(sat) (edge ``"vce_sat"``) or V_CB < 0 (edge ``"vcb_zero"``)
``active``     otherwise (forward active)
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from kit.devices import KINDS
from kit.errors import ConvergenceError, ParameterError

JUNCTION_STEP = 0.1  # V per Newton step for a junction that is forward biased
NODE_STEP = 2.0  # V per Newton step for any node
STEP_TOLERANCE = 1e-12  # relative; plus an absolute 1e-14 V
MAX_ITERATIONS = 200
RESIDUAL_FLOOR = 1e-15  # A
EDGES = ("vce_sat", "vcb_zero")


@dataclass
class OperatingPoints:
    """Solved operating points of one compiled model (arrays over N points).

    Attributes
    ----------
    model : kit.derive.CompiledModel
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

    @property
    def size(self):
        return self.x.shape[1]

    @cached_property
    def i_out(self):
        """Output current in A, positive in the topology's sense."""
        return self.model.output(self.x, self.q)

    @cached_property
    def junctions(self):
        """Transistor name -> dict of normalised ``v_be, v_bc, v_ce, i_c, i_b``."""
        return self.model.junctions(self.x, self.q)

    def _kind(self, name):
        return KINDS[self.model.transistor_kinds[name]]

    @cached_property
    def dissipation(self):
        """Transistor name -> power in W (for a BJT ``V_CE I_C + V_BE I_B``)."""
        return {name: self._kind(name).dissipation(j) for name, j in self.junctions.items()}

    def _devices(self, devices):
        devices = devices or {}
        return {name: devices.get(name) or self._kind(name).typical(_device_polarity(self, name))
                for name in self.junctions}

    def regions(self, edge="vce_sat", devices=None):
        """Transistor name -> array of region names (see the module docstring).

        ``devices`` maps transistor name -> device model (for its ratings, such
        as V_CE(sat)); missing ones use the typical model.
        """
        if edge not in EDGES:
            raise ParameterError("unknown saturation edge", parameter="edge", value=edge,
                                 valid=" or ".join(EDGES))
        v_t = self.q[self.model.operating_index["V_T"]]
        models = self._devices(devices)
        return {name: self._kind(name).regions(j, v_t, models[name], edge)
                for name, j in self.junctions.items()}

    def in_good_region(self, edge="vce_sat", devices=None):
        """Boolean array: every transistor in the region its kind needs (forward active)."""
        regions = self.regions(edge, devices)
        good = np.ones(self.size, dtype=bool)
        for name, region in regions.items():
            good &= region == self._kind(name).GOOD_REGION
        return good

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
        out = np.empty(a.shape[:1] + a.shape[2:3] + b.shape[2:])
        for k in range(a.shape[0]):
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
    arrays = [np.asarray(values[n], dtype=float) for n in model.parameter_names]
    shape = np.broadcast_shapes(*(a.shape for a in arrays), () if size is None else (size,))
    if len(shape) > 1:
        raise ParameterError("parameter arrays must be one-dimensional", parameter="values")
    shape = shape or (1,)
    p = np.stack([np.broadcast_to(a, shape) for a in arrays])
    for name, row in zip(model.parameter_names, p):
        if not np.all(np.isfinite(row) | (np.isposinf(row) & name.endswith(".v_a"))):
            raise ParameterError("must be finite", parameter=name, value=float(row[~np.isfinite(row)][0]))
    return p


def solve_points(model, values, *, x0=None, max_iterations=MAX_ITERATIONS):
    """Exact operating points for parameter values (arrays broadcast together).

    Parameters
    ----------
    model : kit.derive.CompiledModel
    values : dict
        Every parameter name -> scalar or 1-D array.
    x0 : ndarray, optional
        Starting node voltages (n, N); default the topology's closed-form guess.

    Returns
    -------
    OperatingPoints
    """
    p = parameter_array(model, values)
    q = model.operating(p)
    x = model.topology.initial_guess(model, q) if x0 is None else np.array(x0, dtype=float)
    x = np.broadcast_to(x, (len(model.unknowns), p.shape[1])).copy()
    converged = np.zeros(p.shape[1], dtype=bool)
    iterations = np.zeros(p.shape[1], dtype=int)
    pending = np.arange(p.shape[1])
    for iteration in range(1, max_iterations + 1):
        every = pending.size == p.shape[1]  # no copies while every point is still going
        xs, qs = (x, q) if every else (x[:, pending], q[:, pending])
        step = _newton_step(model, xs, qs)
        done = np.all(np.abs(step) <= STEP_TOLERANCE * np.abs(xs) + 1e-14, axis=0)
        updated = xs + step
        if every:
            x = updated
        else:
            x[:, pending] = updated
        finite = np.all(np.isfinite(updated), axis=0)
        iterations[pending] = iteration
        converged[pending[done & finite]] = True
        pending = pending[~done & finite]
        if pending.size == 0:
            break
    # A converged step may still sit on a large residual if the Jacobian was
    # singular there; confirm against the currents flowing at each node.
    f, jac = model.newton_terms(x, q)
    scale = model.scales(x, q)
    # Rounding of the node voltages themselves: a few ulps of the largest
    # voltage times each node's conductances (a tiny drop under a high rail).
    rounding = 8 * np.finfo(float).eps * np.max(np.abs(x), axis=0) * np.sum(np.abs(jac), axis=1)
    # The absolute floor (1 fA) covers a node whose currents are tiny but whose
    # voltage is large (a cut-off device at a high supply).
    converged &= np.all(np.abs(f) <= 1e-9 * scale + rounding + RESIDUAL_FLOOR, axis=0)
    points = OperatingPoints(model, p, q, x, converged, iterations)
    # Self-biased cells also solve at zero current: a topology can refuse that branch.
    valid_branch = getattr(model.topology, "valid_branch", None)
    if valid_branch is not None:
        points.converged &= valid_branch(points)
    return points


def _device_polarity(points, name):
    """Polarity of a device as its topology places it."""
    from kit.designs import transistor_polarity

    return transistor_polarity(points.model.topology, points.model.polarity, name)


def _newton_step(model, x, q):
    f, jac = model.newton_terms(x, q)
    jac = np.moveaxis(jac, -1, 0)
    step = -_batched_solve(jac, np.moveaxis(f, -1, 0)[..., None])[..., 0].T
    step = np.where(np.isfinite(step), step, 0.0)
    # Limit the move of junctions that end up forward biased.
    before = model.limited_voltages(x, q)
    after = model.limited_voltages(x + step, q)
    rise = after - before
    limited = (after > 0.3) & (rise > JUNCTION_STEP)
    fraction = np.min(np.where(limited, JUNCTION_STEP / np.where(limited, rise, 1.0), 1.0), axis=0,
                      initial=1.0)
    largest = np.max(np.abs(step), axis=0)
    fraction = np.minimum(fraction, NODE_STEP / np.maximum(largest, NODE_STEP))
    return step * fraction
