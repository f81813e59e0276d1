"""Electrothermal operating points: junctions heated by their own and their neighbours' power.

A :class:`ThermalNetwork` says how the heated parts are placed: each in a
package of its own (``theta_JA`` to ambient, the default), several on one die
or in one package (a *mutual* thermal resistance between them), or several on
a shared heatsink (each junction through its own junction-to-sink resistance
to a sink that rises ``theta_SA`` times the power of all of them).  Linear
heat flow gives one matrix of thermal resistances ``Theta`` (K/W)::

    T_j = T_ambient + Theta @ P(T_j)

:func:`solve_self_heated` solves the exact circuit and this network together.
It iterates from the cold junctions (which reaches the coolest steady state
when the power rises with temperature), and, where that settles slowly,
takes Newton steps with the electrothermal Jacobian ``I - Theta dP/dT``.
The *electrothermal loop gain* is the largest real eigenvalue of
``Theta dP/dT``; a steady state is stable only where it is below 1.  A point
where the iteration climbs to a loop gain of 1 or more before reaching a
steady state has none: thermal runaway, reported as such
(:attr:`OperatingPoints.runaway`), never as a failed solve.
:func:`runaway_threshold` finds by continuation in the load voltage where
the stable points end.

Examples
--------
>>> net = ThermalNetwork(mutual={("Q1", "Q2"): 60.0})
>>> net.matrix(["Q1", "Q2"], {"Q1": 200.0, "Q2": 200.0}).tolist()
[[200.0, 60.0], [60.0, 200.0]]
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from kit.errors import ConvergenceError, OperatingPointError, ParameterError
from kit.model.solve import solve_points

MAX_ITERATIONS = 30  # fixed-point steps, then Newton steps for the points still moving
FIXED_POINT_STEPS = 8
RISE_TOLERANCE = 1e-6  # K
SCAN_RISE_TOLERANCE = 1e-3  # K, enough to tell a stable load voltage from a runaway one
DERIVATIVE_STEP = 1e-2  # K, the finite step of dP/dT_j
# Above the highest temperature any law is used at (kit.model.vocabulary): a junction
# heated this far while still climbing is held there: in thermal runaway if the loop
# gain there is 1 or more, else at a steady state beyond the laws (``too_hot``).
RUNAWAY_TEMPERATURE = 500.0  # K
# Up to this many points (each heated part's step counted), dP/dT is solved beside the points.
SLOPES_BESIDE_POINTS = 4096
EDGE_STEPS = 15  # load voltages solved at once per round of narrowing a runaway edge
EDGE_TOLERANCE = 1e-5  # of the load voltage (at least 1 V): the runaway edge's width


@dataclass(frozen=True)
class Heatsink:
    """Parts on one heatsink: ``theta_sa`` sink to ambient, ``theta_js`` each junction to the sink (K/W)."""

    name: str
    theta_sa: float
    theta_js: dict

    def __post_init__(self):
        _resistance(f"heatsink.{self.name}.theta_sa", self.theta_sa)
        for part, value in dict(self.theta_js).items():
            _resistance(f"heatsink.{self.name}.theta_js.{part}", value)
        object.__setattr__(self, "theta_js", dict(self.theta_js))


@dataclass(frozen=True)
class ThermalNetwork:
    """How the heated parts share their heat (see the module docstring).

    Parameters
    ----------
    mutual : dict
        ``(part, part) -> theta`` in K/W: the temperature rise of one junction
        per watt in the other (one die, one package).  At most the smaller
        of the two parts' own resistances.
    heatsinks : tuple of Heatsink
        A part on a heatsink is cooled by it, not by its own ``theta_JA``.
    """

    mutual: dict = field(default_factory=dict)
    heatsinks: tuple = ()

    def to_dict(self):
        """Plain data: ``{"mutual": [{"parts": [a, b], "theta": K/W}], "heatsinks": [...]}``."""
        return {"mutual": [{"parts": list(pair), "theta": float(value)} for pair, value in self.mutual.items()],
                "heatsinks": [{"name": h.name, "theta_sa": float(h.theta_sa),
                               "theta_js": {p: float(v) for p, v in h.theta_js.items()}} for h in self.heatsinks]}

    def describe(self):
        """One line of plain words (record names are a stranger's text: escape it where it is shown).

        Examples
        --------
        >>> ThermalNetwork(mutual={("Q1", "Q2"): 60.0}).describe()
        'Q1 and Q2 coupled by 60 K/W (one die or package); parts not named here each in their own package'
        """
        said = [f"{_listed(group)} coupled by {value:.4g} K/W (one die or package)"
                for group, value in _groups(self.mutual)]
        said += [f"heatsink {h.name} ({h.theta_sa:.4g} K/W to the air) under "
                 + ", ".join(f"{p} ({v:.4g} K/W junction to sink)" for p, v in h.theta_js.items())
                 for h in self.heatsinks]
        if not said:
            return "each part in its own package"
        return "; ".join(said + ["parts not named here each in their own package"])

    def parts(self):
        """Every part the network names."""
        named = {p for pair in self.mutual for p in pair}
        return named | {p for h in self.heatsinks for p in h.theta_js}

    def matrix(self, names, own):
        """``Theta`` (K/W) over ``names``; ``own`` gives each part's ``theta_JA`` (scalars or arrays).

        Returns an array of shape (H, H) or (H, H, N) when ``own`` holds arrays.
        """
        index = {n: i for i, n in enumerate(names)}
        unknown = sorted(self.parts() - set(index))
        if unknown:
            raise ParameterError("names no part with a thermal resistance", parameter="thermal",
                                 value=unknown[0], valid=", ".join(names) or "none here")
        size = np.broadcast(*[np.asarray(own[n], dtype=float) for n in names]).shape if names else ()
        theta = np.zeros((len(names), len(names)) + size)
        for n, i in index.items():
            theta[i, i] = own[n]
        sunk = set()
        for sink in self.heatsinks:
            members = [index[p] for p in sink.theta_js]
            if sunk & set(sink.theta_js):
                raise ParameterError("a part sits on one heatsink only", parameter=f"heatsink.{sink.name}",
                                     value=sorted(sunk & set(sink.theta_js))[0], valid="each part once")
            sunk |= set(sink.theta_js)
            for p, i in zip(sink.theta_js, members):
                for k in members:
                    theta[i, k] = sink.theta_sa
                theta[i, i] = sink.theta_sa + sink.theta_js[p]
        for (a, b), value in self.mutual.items():
            _resistance(f"mutual.{a}+{b}", value)
            i, k = index[a], index[b]
            if a == b or np.any(value > np.minimum(theta[i, i], theta[k, k])):
                raise ParameterError("a mutual thermal resistance joins two parts and is at most the "
                                     "smaller one's own", parameter=f"mutual.{a}+{b}", value=value,
                                     valid=f"two different parts, <= their own theta")
            theta[i, k] = theta[k, i] = value
        return theta


def _groups(mutual):
    """``[(parts, theta)]``: pairs of one value that couple every member with every other, as one group."""
    out, left = [], dict(mutual)
    while left:
        (a, b), value = next(iter(left.items()))
        group = [a, b]
        for pair, other in list(left.items()):
            for p in pair:
                if p not in group and other == value and all(
                        left.get((p, q), left.get((q, p))) == value for q in group):
                    group.append(p)
        for i, p in enumerate(group):
            for q in group[i + 1:]:
                left.pop((p, q), None)
                left.pop((q, p), None)
        out.append((group, value))
    return out


def _listed(names):
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + f" and {names[-1]}"


def _resistance(name, value):
    if not (isinstance(value, (int, float)) and math.isfinite(value) and 0 <= value <= 2000):
        raise ParameterError("thermal resistance out of range", parameter=name, value=value,
                             valid="0 … 2000 K/W")


def heated_parts(model):
    """Names of the parts that heat themselves: those with a thermal resistance of their own."""
    return [part.name for part in model.structure.devices
            if "theta_ja" in part.params and f"{part.name}.t_rise" in model.parameter_index]


def _powers(points, heated):
    # A part takes power, never gives it: a negative V_CE I_C belongs to a point outside
    # its laws (judged there), not to a cooled junction.
    return np.stack([np.where(points.converged, np.maximum(np.nan_to_num(points.dissipation[n], nan=0.0), 0.0),
                              0.0) for n in heated])


def _as_matrix(theta, size):
    """(N, H, H) from (H, H) or (H, H, N)."""
    if theta.ndim == 2:
        return np.broadcast_to(theta, (size,) + theta.shape)
    return np.moveaxis(theta, -1, 0)


def _rise_values(heated, rises):
    return {f"{n}.t_rise": rises[i] for i, n in enumerate(heated)}


def _solve_at(model, values, heated, rises, x0):
    return solve_points(model, values | _rise_values(heated, rises), x0=x0)


def _power_slopes(model, values, heated, rises, points):
    """``dP_i/dT_k`` (N, H, H) by a forward step of each junction's temperature."""
    base = _powers(points, heated)
    slopes = np.empty((points.size, len(heated), len(heated)))
    for k in range(len(heated)):
        moved = rises.copy()
        moved[k] = moved[k] + DERIVATIVE_STEP
        stepped = _solve_at(model, values, heated, moved, points.x)
        slopes[:, :, k] = ((_powers(stepped, heated) - base) / DERIVATIVE_STEP).T
    return slopes


def _solve_rises(model, values, heated, rises, x0, slopes=False):
    """``(points at rises, dP_i/dT_k (N, H, H) or None)``.

    With ``slopes`` each junction's forward step (:data:`DERIVATIVE_STEP`) is
    solved beside the points in the same vectorised call, every copy
    starting from ``x0``: one call instead of one plus one per heated part.
    The points at ``rises`` are what solving them alone gives either way
    (each point iterates on its own).
    """
    if not slopes:
        return _solve_at(model, values, heated, rises, x0), None
    size, copies = rises.shape[1], len(heated) + 1
    tiled = {k: v if isinstance(v, (float, int)) or np.ndim(v) == 0 else np.tile(np.broadcast_to(v, (size,)), copies)
             for k, v in values.items()}
    steps = np.concatenate([rises] + [rises + DERIVATIVE_STEP * np.eye(len(heated))[:, [k]]
                                      for k in range(len(heated))], axis=1)
    start = None if x0 is None else np.tile(np.broadcast_to(x0, (len(model.unknowns), size)), copies)
    solved = _solve_at(model, tiled, heated, steps, start)
    points = solved.take(slice(0, size))
    powers = _powers(solved, heated)
    base = powers[:, :size]
    slopes = np.empty((size, len(heated), len(heated)))
    for k in range(len(heated)):
        slopes[:, :, k] = ((powers[:, (k + 1) * size:(k + 2) * size] - base) / DERIVATIVE_STEP).T
    return points, slopes


def loop_gain(theta, slopes):
    """Largest real part of the eigenvalues of ``Theta dP/dT`` at each point ((N, H, H) each)."""
    return np.max(np.linalg.eigvals(theta @ slopes).real, axis=-1)


def solve_self_heated(model, values, network=None, tolerance=RISE_TOLERANCE, cold_powers=None):
    """Exact operating points with every heated part at its electrothermal steady state.

    Parameters
    ----------
    model : kit.model.compiled.CompiledModel
    values : dict
        Full parameter vector (arrays broadcast); ``temp`` is the ambient,
        ``<part>.theta_ja`` each package's thermal resistance.
    network : ThermalNetwork, optional
        Mutual resistances and heatsinks; default: each part alone.
    tolerance : float
        K: a rise is settled when one more step moves it less than this.
    cold_powers : ndarray, optional
        Each heated part's power with no rise (H, N), if already known (a
        scan at the ambient): the iteration starts from the rises they give,
        its first step, instead of solving the cold points first.

    Returns
    -------
    kit.model.solve.OperatingPoints
        Solved at the stable steady state (``<name>.t_rise`` holds each
        rise in K).  Three arrays are added: ``runaway`` (no stable steady
        state: thermal runaway; such points are not converged), ``too_hot``
        (a steady state, if any, lies above the highest temperature the
        laws are used at; not converged either) and
        ``loop_gain`` (the electrothermal loop gain at the point found).
    """
    heated = heated_parts(model)
    if not heated:
        points = solve_points(model, values)
        points.runaway = np.zeros(points.size, dtype=bool)
        points.too_hot = np.zeros(points.size, dtype=bool)
        points.loop_gain = np.zeros(points.size)
        return points
    network = network or ThermalNetwork()
    size = np.broadcast_shapes(*(np.shape(v) for v in values.values()))
    size = size[0] if size else 1
    theta = _as_matrix(network.matrix(heated, {n: values[f"{n}.theta_ja"] for n in heated}), size)
    ambient = np.broadcast_to(np.asarray(values["temp"], dtype=float), (size,))
    rises = np.zeros((len(heated), size))
    if cold_powers is not None:  # the first step from cold, known without a solve
        rises = np.clip(np.einsum("nij,jn->in", theta, np.maximum(cold_powers, 0.0)), 0.0,
                        RUNAWAY_TEMPERATURE - ambient)
    # The Newton steps and the loop gain at the end need dP/dT.  For a few points it is
    # solved with every step, beside them (a call costs more than its points); for many
    # (a Monte Carlo run) only when needed, after them (then the points cost most).
    beside = size * (len(heated) + 1) <= SLOPES_BESIDE_POINTS
    points, slopes = _solve_rises(model, values, heated, rises, None, beside)
    runaway = np.zeros(points.size, dtype=bool)
    capped = np.zeros(points.size, dtype=bool)
    gain = np.zeros(points.size)
    settled = np.zeros(points.size, dtype=bool)
    for step in range(MAX_ITERATIONS):
        target = np.einsum("nij,jn->in", theta, _powers(points, heated))
        change = np.max(np.abs(target - rises), axis=0)
        settled = (change < tolerance) & points.converged
        if np.all(settled | runaway | capped | ~points.converged):
            break
        if step < FIXED_POINT_STEPS:
            new = target  # from cold, climbing to the coolest steady state
        else:
            # Newton: (I - Theta S) d = Theta P - r; a loop gain of 1 or more on the way up: no steady state.
            if slopes is None:
                slopes = _power_slopes(model, values, heated, rises, points)
            gain = loop_gain(theta, slopes)
            climbing = np.any(target > rises + tolerance, axis=0)
            runaway |= ~settled & climbing & (gain >= 1.0) & points.converged
            jac = np.eye(len(heated)) - theta @ slopes
            live = ~runaway & ~settled & ~capped
            delta = np.zeros_like(rises)
            if np.any(live):
                delta[:, live] = np.linalg.solve(jac[live], (target - rises)[:, live].T[..., None])[..., 0].T
            new = rises + delta
        capped |= np.any(ambient + new > RUNAWAY_TEMPERATURE, axis=0) & ~runaway & ~settled
        rises = np.where(runaway | settled, rises, np.clip(new, 0.0, RUNAWAY_TEMPERATURE - ambient))
        points, slopes = _solve_rises(model, values, heated, rises, points.x, beside)
    target = np.einsum("nij,jn->in", theta, _powers(points, heated))
    settled = (np.max(np.abs(target - rises), axis=0) < tolerance) & points.converged & ~runaway & ~capped
    if slopes is None:
        slopes = _power_slopes(model, values, heated, rises, points)
    gain = np.where(runaway, np.maximum(gain, 1.0), loop_gain(theta, slopes))
    # A steady state with a loop gain of 1 or more is the unstable one: no stable point here;
    # held at the laws' highest temperature, a loop gain of 1 or more is runaway too.
    runaway |= (settled | capped) & (gain >= 1.0)
    points.converged &= settled & ~runaway
    points.runaway = runaway
    points.too_hot = capped & ~runaway
    points.loop_gain = gain
    return points


def _hottest_part(points, k):
    """``(name, theta_JA)`` of the heated part with the largest rise at point ``k``."""
    index = points.model.parameter_index
    heated = heated_parts(points.model)
    rises = [float(np.broadcast_to(points.p[index[f"{n}.t_rise"]], (points.size,))[k]) for n in heated]
    name = heated[int(np.argmax(rises))]
    return name, float(np.broadcast_to(points.p[index[f"{name}.theta_ja"]], (points.size,))[k])


def runaway_error(points, what, model=None, values=None, network=None):
    """The error for points that did not solve, naming thermal runaway if that is why; None if all solved.

    Thermal runaway gives an :class:`~kit.errors.OperatingPointError` naming the
    hottest part's ``theta_ja`` (the package to change); with ``model`` and
    ``values`` of a single point its message says where along the load
    voltage the stable points end (:func:`runaway_threshold`).
    """
    if points.converged.all():
        return None
    runaway = np.flatnonzero(getattr(points, "runaway", np.zeros(points.size, dtype=bool)))
    hot = np.flatnonzero(getattr(points, "too_hot", np.zeros(points.size, dtype=bool)))
    if not runaway.size and hot.size:
        name, theta = _hottest_part(points, hot[0])
        return OperatingPointError(f"{name}'s junction would sit above {RUNAWAY_TEMPERATURE:g} K, beyond every "
                                   f"temperature the device laws are used at ({what})",
                                   parameter=f"{name}.theta_ja", value=theta,
                                   valid="a package (θ_JA) or operating point that keeps the junction below T_J(max)")
    if not runaway.size:
        bad = np.flatnonzero(~points.converged)
        return ConvergenceError(f"the exact solve did not converge at {bad.size} of {points.size} points "
                                f"(first: point {bad[0]})", parameter=what)
    name, theta = _hottest_part(points, runaway[0])
    said = f"thermal runaway: {name}'s junction heats itself without a stable operating point ({what})"
    if model is not None and values is not None:
        v = float(values["v_load"])
        try:
            limit = runaway_threshold(model, values, (0.0, v) if v > 0 else (v, 0.0), network)
            if limit.v_load is not None:
                said = f"{limit.text()} ({name}; {what})"
        except ConvergenceError as err:
            said = f"{err.message} ({name}; {what})"
    return OperatingPointError(said, parameter=f"{name}.theta_ja", value=theta,
                               valid="a package (θ_JA) or operating point with an electrothermal loop gain below 1")


def require_stable(points, what="operating point"):
    """Raise for points without a stable electrothermal state, naming runaway as such.

    Thermal runaway raises :class:`~kit.errors.ConvergenceError` saying "thermal runaway"
    with the first such point's ambient and load voltage; any other failure is
    :meth:`OperatingPoints.require`'s.
    """
    runaway = np.flatnonzero(getattr(points, "runaway", np.zeros(points.size, dtype=bool)))
    if runaway.size:
        k = runaway[0]
        index = points.model.parameter_index
        temp = float(np.broadcast_to(points.p[index["temp"]], (points.size,))[k])
        where = f"ambient {temp - 273.15:.4g} °C"
        if "v_load" in index:
            where += f", V_load = {float(np.broadcast_to(points.p[index['v_load']], (points.size,))[k]):.4g} V"
        raise ConvergenceError(f"thermal runaway: no stable operating point at {runaway.size} of {points.size} "
                               f"points (first: {where}); electrothermal loop gain >= 1", parameter=what)
    return points.require(what)


def junction_temperatures(points):
    """Device name -> junction temperature in K of solved points."""
    temp = points.model.parameter_index["temp"]
    temp = points.p[temp]
    out = {}
    for name in points.model.structure.device_names:
        index = points.model.parameter_index.get(f"{name}.t_rise")
        out[name] = temp + (points.p[index] if index is not None else 0.0)
    return out


RUNAWAY_CAUSE = "thermal_runaway"  # a compliance edge set by self-heating (kit.analysis.evaluation)


@dataclass(frozen=True)
class RunawayThreshold:
    """Where the stable electrothermal points end along the load voltage.

    ``v_load`` is the last load voltage with a stable point (None: every load
    voltage searched has one), ``side`` whether the runaway lies ``"above"``
    or ``"below"`` it, ``loop_gain`` the loop gain there, ``searched`` the
    range searched, ``part`` the heated part with the largest rise at the
    edge (None where not known).
    """

    v_load: float | None
    loop_gain: float
    searched: tuple
    side: str = "above"
    part: str | None = None
    too_hot: bool = False  # past the edge a steady state, if any, lies above RUNAWAY_TEMPERATURE


    def text(self):
        if self.side == "everywhere":
            return (f"thermal runaway: no stable operating point for V_load {self.searched[0]:.4g} … "
                    f"{self.searched[1]:.4g} V (electrothermal loop gain >= 1)")
        if self.v_load is None:
            return (f"no thermal runaway for V_load {self.searched[0]:.4g} … {self.searched[1]:.4g} V "
                    f"(electrothermal loop gain at most {self.loop_gain:.3g})")
        return (f"thermal runaway: no stable operating point {self.side} V_load = {self.v_load:.4g} V, "
                f"electrothermal loop gain {self.loop_gain:.3g} there")

    def edge_text(self):
        """What a compliance edge set here says after its part's name (``"Q2 " + ...``)."""
        if self.too_hot:
            return (f"runs away thermally {self.side} this load voltage (self-heated; its junction would "
                    f"settle above {RUNAWAY_TEMPERATURE:g} K, beyond every temperature the laws hold)")
        return (f"runs away thermally {self.side} this load voltage (self-heated; electrothermal loop "
                f"gain {self.loop_gain:.3g} at the edge, 1 beyond)")

    def to_dict(self):
        return {"v_load": self.v_load, "side": self.side, "loop_gain": self.loop_gain,
                "searched": list(self.searched), "part": self.part, "too_hot": self.too_hot,
                "text": self.text()}


def _everywhere(lo, hi):
    return ConvergenceError(f"thermal runaway: no stable operating point for V_load {lo:.4g} … {hi:.4g} V "
                            "(electrothermal loop gain >= 1 everywhere)", parameter="v_load",
                            valid="a lower dissipation: less current, a cooler package or more voltage headroom "
                                  "taken by a resistor")


def _edge(model, values, good, wrong, gain, network, searched, side, unstable=None):
    """Narrow the step between a stable load voltage ``good`` and a runaway one ``wrong``.

    Each round solves :data:`EDGE_STEPS` load voltages between them at once
    (one vectorised solve instead of a bisection's one point at a time) and
    keeps the step where runaway begins, to :data:`EDGE_TOLERANCE`.
    """
    unstable = unstable or (lambda points: points.runaway)
    part, too_hot = None, False
    while abs(wrong - good) > EDGE_TOLERANCE * max(1.0, abs(wrong)):
        trial = np.linspace(good, wrong, EDGE_STEPS + 2)[1:-1]
        solved = solve_self_heated(model, values | {"v_load": trial}, network)
        bad = unstable(solved)
        first = int(np.argmax(bad)) if np.any(bad) else trial.size
        if first > 0:
            good, gain, part = float(trial[first - 1]), float(solved.loop_gain[first - 1]), \
                _hottest_part(solved, first - 1)[0]
        if first < trial.size:
            wrong, too_hot = float(trial[first]), bool(solved.too_hot[first])
    if part is None:
        part = _hottest_part(solve_self_heated(model, values | {"v_load": np.array([good])}, network), 0)[0]
    return RunawayThreshold(float(good), gain, searched, side, part, too_hot)


def runaway_threshold(model, values, v_range, network=None, points=65):
    """Continuation in the load voltage: the last stable point before thermal runaway.

    The load voltage is stepped across ``v_range``; between the last stable
    and the first runaway step (from whichever end is stable) the edge is
    found by bisection.

    Raises
    ------
    kit.errors.ConvergenceError
        If every load voltage searched runs away.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.evaluation import model_of
    >>> d = kit.design("divider_source")
    >>> runaway_threshold(model_of(d), d.parameters(), (4.0, 10.0)).v_load is None
    True
    """
    lo, hi = float(v_range[0]), float(v_range[1])
    grid = np.linspace(lo, hi, points)
    solved = solve_self_heated(model, values | {"v_load": grid}, network)
    bad = solved.runaway
    if not np.any(bad):
        return RunawayThreshold(None, float(np.max(solved.loop_gain[solved.converged], initial=0.0)), (lo, hi))
    if np.all(bad):
        raise _everywhere(lo, hi)
    side = "below" if bad[0] else "above"
    order = np.arange(points) if side == "above" else np.arange(points)[::-1]
    first = int(order[int(np.argmax(bad[order]))])
    last = first - 1 if side == "above" else first + 1
    return _edge(model, values, grid[last], grid[first], float(solved.loop_gain[last]), network, (lo, hi), side)


def stable_load_range(model, values, v_range, network=None, points=65, cold=None):
    """The stretch of load voltages with a stable electrothermal point around the design's own.

    The load voltage is stepped across ``v_range`` (with the design's own
    ``values["v_load"]`` among the steps); the stretch without runaway that
    holds the design's load voltage (else the nearest one) is followed to
    each end, and an end where runaway sets in is narrowed down.  A load
    voltage whose junction would settle only above
    :data:`RUNAWAY_TEMPERATURE` (``too_hot``, far past any part's T_J(max))
    counts as runaway here: the part is destroyed on the way; so does one
    whose electrothermal solve does not settle (only next to an edge, where
    the loop gain nears 1).

    Returns
    -------
    (RunawayThreshold or None, RunawayThreshold or None)
        The low and the high end where runaway cuts the range (``side``
        ``"below"`` and ``"above"``); None where the stretch reaches the end
        of ``v_range``.

    Raises
    ------
    kit.errors.ConvergenceError
        If every load voltage searched runs away.

    Examples
    --------
    >>> import kit
    >>> from kit.analysis.evaluation import model_of
    >>> d = kit.design("divider_source")
    >>> stable_load_range(model_of(d), d.parameters(), (4.0, 10.0))
    (None, None)
    """
    lo, hi = float(v_range[0]), float(v_range[1])
    nominal = float(np.clip(values["v_load"], lo, hi))
    grid = np.unique(np.append(np.linspace(lo, hi, points), nominal))
    powers = None
    if cold is not None:  # the parts' powers with no rise, read between the scan's load voltages
        v_cold, cold_points = cold
        known = cold_points.converged
        if np.count_nonzero(known) >= 2:
            heated = heated_parts(model)
            powers = np.array([np.interp(grid, v_cold[known], p[known]) for p in _powers(cold_points, heated)])
    # Which steps are stable needs no micro-kelvin rises; the edges are narrowed at full precision.
    solved = solve_self_heated(model, values | {"v_load": grid}, network, tolerance=SCAN_RISE_TOLERANCE,
                               cold_powers=powers)
    bad = _unstable(solved)
    if not np.any(bad):
        return None, None
    if np.all(bad):
        raise _everywhere(lo, hi)
    stable = np.flatnonzero(~bad)
    at = int(stable[np.argmin(np.abs(grid[stable] - nominal))])
    first, last = at, at
    while first > 0 and not bad[first - 1]:
        first -= 1
    while last < grid.size - 1 and not bad[last + 1]:
        last += 1
    gain = solved.loop_gain
    low = (_edge(model, values, grid[first], grid[first - 1], float(gain[first]), network, (lo, hi), "below",
                 _unstable) if first > 0 else None)
    high = (_edge(model, values, grid[last], grid[last + 1], float(gain[last]), network, (lo, hi), "above",
                  _unstable) if last < grid.size - 1 else None)
    return low, high


def _unstable(points):
    # Runaway, a steady state past the laws, or none reached (the loop gain near 1 settles
    # ever more slowly towards the edge): no stable point to hold a compliance on.
    return points.runaway | points.too_hot | ~points.converged
