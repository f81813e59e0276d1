"""Numeric functions of one topology and polarity: arrays in, arrays out.

:func:`compile_model` returns a :class:`CompiledModel` built on the
generated code (:mod:`kit.model.codegen`, cached by :mod:`kit.model.cache`).
All arrays are 1-D over points: parameters ``p`` as shape ``(P, N)``,
operating values ``q`` as ``(M, N)``, unknowns ``x`` as ``(n, N)``.  Use
:mod:`kit.model.solve` rather than calling these directly.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from kit.devices.base import Params
from kit.model.cache import compiled
from kit.model.structure import structure


def compile_model(topology, polarity):
    """The :class:`CompiledModel` of a topology and polarity (memory and disk cache)."""
    return _compile(topology.key, polarity)


@lru_cache(maxsize=None)
def _compile(topology_key, polarity):
    from kit import topologies

    topology = topologies.get(topology_key)
    manifest, module = compiled(topology, polarity)
    return CompiledModel(topology, polarity, manifest, module)


# An infinite operating value (an ideal part's Early voltage) is taken to its
# limit by this finite stand-in where a form evaluated at infinity gives
# inf/inf or inf - inf: large enough that 1/V_A vanishes beside every other
# term, small enough that its fourth power is still a float.
IDEAL_STAND_IN = 1e60
# A form larger than this at the stand-in grows without bound as V_A -> inf.
UNBOUNDED = 1e40


def _limit_at_ideal(evaluate, q, *rest):
    """``evaluate(*rest, q)`` with NaN from an infinite operating value replaced by its limit.

    Returns a float array; a value growing with the stand-in is reported
    as +/-inf, one that settles is reported as its settled value.
    """
    with np.errstate(all="ignore"):
        out = np.array(evaluate(*rest, q), dtype=float)
    infinite = np.isinf(q)
    if not infinite.any() or not np.isnan(out).any():
        return out
    finite_q = np.where(infinite, np.sign(q) * IDEAL_STAND_IN, q)
    with np.errstate(all="ignore"):
        limit = np.array(evaluate(*rest, finite_q), dtype=float)
    # copysign, not sign * inf: a settled limit of exactly 0 would make 0 * inf (NaN, a warning).
    limit = np.where(np.abs(limit) > UNBOUNDED, np.copysign(np.inf, limit), limit)
    return np.where(np.isnan(out), limit, out)


def _stack(values, shape):
    """Broadcast a list of scalars/arrays from generated code to one float array."""
    out = np.empty((len(values),) + shape)
    for row, value in zip(out, values):
        row[...] = value  # broadcasts scalars; cheaper than broadcast_to + stack
    return out


class CompiledModel:
    """Numeric functions of one topology and polarity (see the module docstring)."""

    def __init__(self, topology, polarity, manifest, module):
        self.topology = topology
        self.polarity = polarity
        self.sense = topology.sense(polarity)
        self.manifest = manifest
        self.module = module
        self.structure = structure(topology, polarity)
        self.parts = self.structure.parts
        self.unknowns = manifest["unknowns"]
        self.operating_names = manifest["operating"]
        self.parameter_names = manifest["parameters"]
        self.closed_form_names = [f.key for f in self.structure.closed_forms]
        self.extra_names = [key for key, _ in self.structure.extras]
        self.output_sign = manifest["output_sign"]
        self.load_index = manifest["load"]
        self.parameter_index = {n: k for k, n in enumerate(self.parameter_names)}
        self.operating_index = {n: j for j, n in enumerate(self.operating_names)}
        self.started = [self.unknowns.index(n) for n in manifest["started"]]
        self.has_valid = manifest["has_valid"]
        # Where each sparse table's entries go: (rows, cols) index arrays (each pair appears once).
        self._pairs = {key: tuple(np.array(axis, dtype=np.intp) for axis in zip(*manifest[key]))
                       for key in ("dq_dp", "jacobian_x", "jacobian_q") if manifest.get(key)}

    def _sparse(self, key, values, shape):
        """A dense array of ``shape`` with ``values`` (K, N) at the entries of manifest table ``key``, else 0."""
        out = np.zeros(shape)
        if key in self._pairs:
            out[self._pairs[key]] = values  # one assignment: this runs at every Newton step
        return out

    def params(self, p, part):
        """The parameters of ``part`` (a :class:`kit.model.structure.PartInfo`) in ``p``, by key."""
        return Params({f"{part.name}.{k}": self.parameter_index[v] for k, v in part.params.items()},
                      p, part.name)

    def operating_of(self, part, q):
        """Role -> row of ``q`` of one part's operating values (``"beta"``, ``"V_A"``, ...)."""
        out = {}
        for role, (prefix, _, _) in part.kind.symbol_roles.items():
            index = self.operating_index.get(f"{prefix}{part.name}")
            if index is not None:
                out[role] = q[index]
        return out

    def operating(self, p):
        """Operating values ``q`` (M, N) from parameters ``p`` (P, N)."""
        return _stack(self.module.operating(p), p.shape[1:])

    def dq_dp(self, p):
        """Jacobian of the operating values over the parameters, (M, P, N)."""
        shape = (len(self.operating_names), len(self.parameter_names)) + p.shape[1:]
        return self._sparse("dq_dp", _stack(self.module.dq_dp(p), p.shape[1:]), shape)

    def residuals(self, x, q):
        return _stack(self.module.residuals(x, q), x.shape[1:])

    def scales(self, x, q):
        return _stack(self.module.scales(x, q), x.shape[1:])

    def jacobian_x(self, x, q):
        n = len(self.unknowns)
        return self._sparse("jacobian_x",
                            _stack(self.module.jacobian_x(x, q), x.shape[1:]), (n, n) + x.shape[1:])

    def newton_terms(self, x, q):
        """``(F (n, N), J_x (n, n, N))`` from one call that shares subexpressions."""
        n = len(self.unknowns)
        values = _stack(self.module.newton_terms(x, q), x.shape[1:])
        return values[:n], self._sparse("jacobian_x", values[n:], (n, n) + x.shape[1:])

    def jacobian_q(self, x, q):
        shape = (len(self.unknowns), len(self.operating_names)) + x.shape[1:]
        return self._sparse("jacobian_q",
                            _stack(self.module.jacobian_q(x, q), x.shape[1:]), shape)

    def output(self, x, q):
        return _stack(self.module.output(x, q), x.shape[1:])[0]

    def output_gradients(self, x, q):
        """``(dI/dx (n, N), dI/dq|_x (M, N))``."""
        d_x = _stack(self.module.output_x(x, q), x.shape[1:])
        d_q = np.zeros((len(self.operating_names),) + x.shape[1:])
        for j, value in zip(self.manifest["output_q"], self.module.output_q(x, q)):
            d_q[j] = value
        return d_x, d_q

    def junctions(self, x, q):
        """Part name -> dict of its exported quantities (arrays)."""
        values = iter(_stack(self.module.junctions(x, q), x.shape[1:]))
        return {part.name: {key: next(values) for key in part.quantities} for part in self.parts}

    def limited_voltages(self, x, q):
        """The junction voltages whose Newton steps are limited, stacked (L, N)."""
        return _stack(self.module.limited(x, q), x.shape[1:])

    def extras(self, x, q):
        """Key -> small-signal form (an ideal part's infinite Early voltage taken as a limit)."""
        values = _limit_at_ideal(lambda x_, q_: _stack(self.module.extras(x_, q_), x_.shape[1:]), q, x)
        return dict(zip(self.extra_names, values))

    def closed_forms(self, q):
        """Key -> closed-form output current (an infinite Early voltage taken as a limit)."""
        values = _limit_at_ideal(lambda q_: _stack(self.module.closed_forms(q_), q_.shape[1:]), q)
        return dict(zip(self.closed_form_names, values))

    def closed_form_gradients(self, q):
        """Key -> dI_cf/dq (M, N) (an infinite Early voltage taken as a limit)."""
        def gradients(q_):
            grads = np.zeros((len(self.closed_form_names),) + q_.shape)
            for (c, j), value in zip(self.manifest["closed_forms_q"], self.module.closed_forms_q(q_)):
                grads[c, j] = value
            return grads

        values = _limit_at_ideal(gradients, q)
        return dict(zip(self.closed_form_names, values))

    def starts(self, q):
        """Declared starting voltages ``(len(started), N)`` for the unknowns in ``self.started``.

        A start may be NaN or infinite for a design far from the one its
        closed form assumes (a log of a negative current); such a point
        fails its first Newton step and is retried by source stepping, so
        the floating-point warnings of that guess are not the user's.
        """
        with np.errstate(all="ignore"):
            return _stack(self.module.starts(q), q.shape[1:])

    def valid(self, x, q):
        """Boolean array: the point lies on the branch the circuit declares valid (all True if none)."""
        if not self.has_valid:
            return np.ones(x.shape[1:], dtype=bool)
        return np.asarray(self.module.valid(x, q)[0], dtype=bool)
