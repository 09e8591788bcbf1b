"""Assign observed carbon signals to the expected carbon classes of a structure.

The assignment is the minimum-cost matching of sample signals to carbon classes in which

* each class sits on at most one signal, or on none (a missing carbon, at a cost);
* a signal may hold several classes: a diastereotopic or rotamer pair
  (``CarbonClass.partner``) at a small cost, any other coincidence (accidental overlap) at
  ``supported_overlap_cost`` per extra class plus a cost for every carbon the signal holds
  beyond its height (``Signal.carbons``, compared with :func:`relative_carbons`, since the
  classifier measures tallness against class-mates), so a signal twice as tall as its
  neighbours takes a second class cheaply and an ordinary one does not;
* a class of several symmetry-equivalent carbons may take a second signal within
  ``split_window_ppm`` of its first (hindered rotation, diastereotopic groups that the
  topology calls equivalent), at a cost;
* a sample signal may stay unassigned (an unexplained peak, at a cost that falls with SNR).

The pair cost of a class on a signal adds (see :func:`pair_cost`): multiplicity agreement
weighted by the call's confidence (a candidate list such as "CH or CH3" is partly fine; no
call is no information); the distance outside the class's handbook shift range (zero inside,
quadratic outside); the distance from a predicted shift when there is one (Huber in units of
the prediction's standard deviation, capped: a predictor's outliers must not stop a carbon
from taking the only peak left for it; a prediction within two sigma also shrinks the range
term, the structure-specific estimate outweighing the coarse range); heteronuclear
splitting agreement (a C–F doublet wants a fluorine-coupled class); and a weak intensity
hint.  Costs and weights live in :class:`verify.verdict.VerdictConfig`.

The optimum is found exactly as a small mixed-integer program (HiGHS through
:func:`scipy.optimize.milp`): plain :func:`scipy.optimize.linear_sum_assignment` on a
slot-expanded matrix cannot price the partner coincidence, which depends on two classes at
once.  Pairs that can never pay (cost above "missing + unassigned") are pruned first, which
keeps the program a few hundred binaries for drug-sized molecules (milliseconds).  The
result is deterministic: HiGHS is run single-threaded on a problem built in a fixed order,
and a tiny cost toward each range's centre breaks ties between interchangeable classes.

References
----------
.. [1] H. W. Kuhn, "The Hungarian method for the assignment problem", Naval Res. Logist. Q.
   1955, 2, 83-97 (the assignment problem this generalises).
.. [2] Q. Huangfu, J. A. J. Hall, "Parallelizing the dual revised simplex method", Math. Prog.
   Comp. 2018, 10, 119-142 (HiGHS, the solver behind scipy's ``milp``).
.. [3] P. J. Huber, "Robust estimation of a location parameter", Ann. Math. Statist. 1964,
   35, 73-101 (the prediction cost).

"""

from __future__ import annotations

from collections.abc import Collection, Sequence

import numpy as np
from scipy.optimize import Bounds, LinearConstraint, milp
from scipy.sparse import coo_array

from verify._verdict_config import VerdictConfig
from verify.errors import ProcessingError
from verify.model import HYDROGENS, Assignment, CarbonClass, Expectation, Observation, Signal

__all__ = [
    "agreement",
    "assign",
    "overlap_kind",
    "pair_cost",
    "range_distance",
]

_TIEBREAK = 1e-3


def agreement(multiplicity: str, signal: Signal) -> str:
    """How a class multiplicity agrees with a signal's call.

    Parameters
    ----------
    multiplicity : str
        The class's ``"C"``, ``"CH"``, ``"CH2"`` or ``"CH3"``.
    signal : Signal
        The observed signal.

    Returns
    -------
    str
        ``"match"`` (the call), ``"candidate"`` (among the remaining candidates, or part
        of a mixed signal's composition), ``"unknown"`` (no call at all) or
        ``"contradiction"``.

    """
    if signal.multiplicity is None and not signal.candidates:
        return "unknown"
    if signal.mixed and multiplicity in signal.candidates:
        return "match"
    if signal.multiplicity == multiplicity:
        return "match"
    if multiplicity in signal.candidates:
        return "candidate"
    return "contradiction"


def range_distance(cls: CarbonClass, ppm: float) -> float:
    """Distance in ppm of a shift outside the class's shift range (0 inside)."""
    lo, hi = cls.shift_range
    return max(0.0, lo - ppm, ppm - hi)


def _coupled(cls: CarbonClass, nucleus: str) -> tuple[bool, bool]:
    """(any coupling to `nucleus`, a one- or two-bond one) for a class."""
    flag = {"19F": "coupled-F", "31P": "coupled-P", "2H": "deuterated"}[nucleus]
    cs = [c for c in cls.couplings if c.nucleus == nucleus]
    return bool(cs) or flag in cls.flags, any(c.bonds <= 2 for c in cs)


_PATTERN_NUCLEUS = {"C-F": "19F", "C-P": "31P", "C-D": "2H"}


def pair_cost(cls: CarbonClass, signal: Signal, config: VerdictConfig | None = None) -> float:
    """Cost of putting one class on one signal, alone (lower is better).

    Parameters
    ----------
    cls : CarbonClass
        Expected class (shift range and any prediction in ppm).
    signal : Signal
        Observed signal (ppm on the referenced axis).
    config : VerdictConfig, optional
        Weights; defaults as documented there.

    Returns
    -------
    float
        Sum of the multiplicity, range, prediction, coupling and intensity terms.

    References
    ----------
    .. [1] Huber, Ann. Math. Statist. 1964, 35, 73 (robust prediction term).

    """
    cfg = config or VerdictConfig()
    cost = 0.0
    how = agreement(cls.multiplicity, signal)
    if how == "contradiction":
        cost += cfg.contradiction_cost * signal.confidence
    elif how == "candidate":
        cost += cfg.candidate_cost * signal.confidence
    d = range_distance(cls, signal.ppm)
    range_cost = (d / cfg.range_scale_ppm) ** 2
    lo, hi = cls.shift_range
    cost += _TIEBREAK * abs(signal.ppm - 0.5 * (lo + hi)) / (hi - lo + 1.0)
    if cls.predicted_ppm is not None:
        sd = cls.prediction_sd or cfg.prediction_sd_ppm
        x = abs(signal.ppm - cls.predicted_ppm) / max(sd, 1e-6)
        k = cfg.prediction_huber
        cost += min(cfg.prediction_cap, 0.5 * x * x if x <= k else k * x - 0.5 * k * k)
        if x <= 2.0:
            # A prediction for this very structure outweighs the coarse handbook range.
            range_cost *= cfg.vouched_range_factor
    cost += range_cost
    nucleus = _PATTERN_NUCLEUS.get(signal.pattern or "")
    if nucleus is not None:
        if not _coupled(cls, nucleus)[0]:
            cost += cfg.coupling_mismatch_cost
    else:
        for nuc in ("19F", "31P"):
            if _coupled(cls, nuc)[1] and not signal.lines:
                cost += cfg.coupling_unseen_cost
    if signal.carbons >= 2 and cls.carbons == 1:
        cost += cfg.intensity_hint_cost
    return cost


def overlap_kind(
    expectation: Expectation,
    signal: Signal,
    classes: Sequence[int],
    config: VerdictConfig | None = None,
) -> str | None:
    """Tell what kind of coincidence several classes on one signal are.

    Parameters
    ----------
    expectation : Expectation
        The structure's classes.
    signal : Signal
        The signal holding them.
    classes : sequence of int
        Indices into ``expectation.classes``.
    config : VerdictConfig, optional
        For the prediction standard deviation.

    Returns
    -------
    str or None
        None for a single class; ``"partner"`` when every extra class is the
        diastereotopic/rotamer partner of another one there; ``"supported"`` when the
        signal is tall enough for all it holds (``Signal.carbons`` against
        :func:`relative_carbons`, a quarter carbon of slack), or mixed in the edited spectra
        with a matching composition, and every prediction lies within two sigma of it;
        ``"possible"`` when only the intensity (or mixing) supports it, or the predictions
        (within ``overlap_prediction_ppm`` of each other and two sigma of the signal), or,
        without predictions, when the classes share one environment label; else
        ``"unsupported"``.

    """
    if len(classes) < 2:
        return None
    cfg = config or VerdictConfig()
    cls = [expectation.classes[i] for i in classes]
    held = set(classes)
    # Partner pairs inside the group: each removes one "extra" class.
    pairs = {
        (min(i, c.partner), max(i, c.partner))
        for i, c in zip(classes, cls, strict=True)
        if c.partner is not None and c.partner in held and c.partner != i
    }
    if len(classes) - len(pairs) <= 1:
        return "partner"
    rel = relative_carbons(expectation)
    full = sum(rel[k] for k in classes) <= _capacity(signal) or (
        signal.mixed and {c.multiplicity for c in cls} <= set(signal.candidates)
    )
    some = full or signal.mixed or signal.carbons >= 2
    preds = [(c.predicted_ppm, c.prediction_sd or cfg.prediction_sd_ppm) for c in cls]
    known = [(p, sd) for p, sd in preds if p is not None]
    near_signal = all(abs(p - signal.ppm) <= 2.0 * sd for p, sd in known)
    if full and near_signal:
        return "supported"
    if some:
        return "possible"
    if len(known) == len(cls):
        # Predictions for every class: they must nearly coincide and fit the signal.
        centres = [p for p, _ in known]
        if max(centres) - min(centres) <= cfg.overlap_prediction_ppm and all(
            abs(p - signal.ppm) <= 2.0 * sd for p, sd in known
        ):
            return "possible"
        return "unsupported"
    # No predictions: alike carbons (the same environment label) coincide often, e.g.
    # several aryl OCH3 at 56 ppm or phenyl CH at 128-129 ppm (common practice).
    if len({c.environment for c in cls}) == 1:
        return "possible"
    return "unsupported"


def _missing_cost(cls: CarbonClass, cfg: VerdictConfig) -> float:
    return cfg.missing_cost if HYDROGENS[cls.multiplicity] > 0 else cfg.missing_quaternary_cost


def _unassigned_cost(sig: Signal, cfg: VerdictConfig) -> float:
    if sig.snr <= 0:  # not measured: count it fully
        return cfg.unassigned_cost
    return cfg.unassigned_cost * min(1.0, max(0.25, sig.snr / cfg.weak_snr))


_SLACK = 0.25  # relative heights are estimates: a quarter carbon over is not evidence
_EXCESS_UNIT = 0.5  # excess (relative carbons) that costs the step to a full overlap


def relative_carbons(expectation: Expectation) -> list[float]:
    """Each class's expected height relative to a typical class of its multiplicity.

    ``Signal.carbons`` is how tall a signal is against its class-mates (1 for a typical
    one), so a class counts as ``carbons / median carbons of its multiplicity``: in a
    molecule whose CH classes all hold two carbons, each is 1.
    """
    by_mult: dict[str, list[int]] = {}
    for c in expectation.classes:
        by_mult.setdefault(c.multiplicity, []).append(c.carbons)
    typical = {m: float(np.median(v)) for m, v in by_mult.items()}
    return [c.carbons / typical[c.multiplicity] for c in expectation.classes]


def _capacity(sig: Signal) -> float:
    """Relative carbons a signal can hold without intensity cost."""
    return max(float(sig.carbons), 2.0 if sig.mixed else 0.0) + _SLACK


def _overlap_penalty(sig: Signal, extra: int, rel_total: float, cfg: VerdictConfig) -> float:
    excess = max(0.0, rel_total - _capacity(sig))
    unit = (cfg.overlap_cost - cfg.supported_overlap_cost) / _EXCESS_UNIT
    return extra * cfg.supported_overlap_cost + excess * unit


def assign(
    expectation: Expectation,
    observation: Observation,
    *,
    config: VerdictConfig | None = None,
    exclude: Collection[int] = (),
) -> tuple[Assignment, ...]:
    """Optimal assignment of sample signals to expected carbon classes.

    Parameters
    ----------
    expectation : Expectation
        The proposed structure's classes (shift ranges, predictions in ppm).
    observation : Observation
        The classified signals; those with role ``"sample"`` take part, and those with
        role ``"impurity"`` (minor signals) at ``minor_signal_cost`` extra and without
        any cost when left over.
    config : VerdictConfig, optional
        Costs; defaults as documented there.
    exclude : collection of int, optional
        Indices into ``observation.signals`` to leave out (e.g. recognised impurities).

    Returns
    -------
    tuple of Assignment
        One per signal that holds at least one class, in signal order.  Classes in no
        assignment are missing; sample signals in none are unassigned.

    Raises
    ------
    ProcessingError
        If the solver fails (it should not: the empty assignment is always feasible).

    References
    ----------
    .. [1] Kuhn, Naval Res. Logist. Q. 1955, 2, 83 (assignment problem).
    .. [2] Huangfu & Hall, Math. Prog. Comp. 2018, 10, 119 (HiGHS).

    """
    cfg = config or VerdictConfig()
    classes = expectation.classes
    sigs = observation.signals
    skip = set(exclude)
    # Sample signals, and minor ones the classifier set aside as a possible impurity (seen
    # in an edited spectrum only): a weak protonated carbon may be one of them.
    sample = [j for j, s in enumerate(sigs) if s.role in ("sample", "impurity") and j not in skip]
    if not classes or not sample:
        return ()

    # Variables: x (class, signal) pairs, then y (signal covered), o (extra classes), z (pairs).
    pairs: list[tuple[int, int, float]] = []
    for k, cls in enumerate(classes):
        mk = _missing_cost(cls, cfg)
        for j in sample:
            c = pair_cost(cls, sigs[j], cfg)
            if sigs[j].role == "impurity":
                c += cfg.minor_signal_cost
            if c < mk + (_unassigned_cost(sigs[j], cfg) if sigs[j].role == "sample" else 0.0):
                pairs.append((k, j, c))
    if not pairs:
        return ()
    col_of = {j: n for n, j in enumerate(sample)}
    nx, ns = len(pairs), len(sample)
    pair_index = {(k, j): p for p, (k, j, _) in enumerate(pairs)}
    partner_pairs = sorted(
        {
            (min(k, c.partner), max(k, c.partner))
            for k, c in enumerate(classes)
            if c.partner is not None and 0 <= c.partner < len(classes) and c.partner != k
        }
    )
    zs: list[tuple[int, int, int]] = []  # (x index of a, x index of b, signal)
    for a, b in partner_pairs:
        for j in sample:
            if (a, j) in pair_index and (b, j) in pair_index:
                zs.append((pair_index[(a, j)], pair_index[(b, j)], j))
    nz = len(zs)
    # w: a class of several symmetry-equivalent carbons taking a second, nearby signal
    # (hindered rotation, diastereotopic groups): (class, signal, cost, primary x indices).
    ws: list[tuple[int, int, float, list[int]]] = []
    for k, j, c in pairs:
        if classes[k].carbons < 2:
            continue
        near = [
            q
            for q, (k2, j2, _) in enumerate(pairs)
            if k2 == k and j2 != j and abs(sigs[j2].ppm - sigs[j].ppm) <= cfg.split_window_ppm
        ]
        if near:
            ws.append((k, j, c + cfg.split_cost, near))
    nw = len(ws)
    # o: extra classes on a signal; e: relative carbons held beyond its intensity.
    y0, o0, p0, z0 = nx, nx + ns, nx + 2 * ns, nx + 3 * ns
    w0 = z0 + nz
    rel = relative_carbons(expectation)
    nvar = w0 + nw

    obj = np.zeros(nvar)
    for p, (k, _j, c) in enumerate(pairs):
        obj[p] = c - _missing_cost(classes[k], cfg)
    for j in sample:
        if sigs[j].role == "sample":  # leaving a minor signal unassigned costs nothing
            obj[y0 + col_of[j]] = -_unassigned_cost(sigs[j], cfg)
        obj[o0 + col_of[j]] = cfg.supported_overlap_cost
        obj[p0 + col_of[j]] = (cfg.overlap_cost - cfg.supported_overlap_cost) / _EXCESS_UNIT
    for q, _ in enumerate(zs):
        obj[z0 + q] = cfg.partner_cost
    for q, (_, _, c, _) in enumerate(ws):
        obj[w0 + q] = c

    rows: list[int] = []
    cols: list[int] = []
    vals: list[float] = []
    lb: list[float] = []
    ub: list[float] = []

    def add(entries: list[tuple[int, float]], lo: float, hi: float) -> None:
        r = len(lb)
        for c_, v in entries:
            rows.append(r)
            cols.append(c_)
            vals.append(v)
        lb.append(lo)
        ub.append(hi)

    by_class: dict[int, list[int]] = {}
    by_signal: dict[int, list[int]] = {}
    for p, (k, j, _) in enumerate(pairs):
        by_class.setdefault(k, []).append(p)
        by_signal.setdefault(j, []).append(p)
    z_of_signal: dict[int, list[int]] = {}
    for q, (_, _, j) in enumerate(zs):
        z_of_signal.setdefault(j, []).append(z0 + q)
    w_of_signal: dict[int, list[int]] = {}
    w_of_class: dict[int, list[int]] = {}
    for q, (k, j, _, _) in enumerate(ws):
        w_of_signal.setdefault(j, []).append(w0 + q)
        w_of_class.setdefault(k, []).append(w0 + q)
    for k in sorted(by_class):
        add([(p, 1.0) for p in by_class[k]], -np.inf, 1.0)
    for j in sample:
        xs = by_signal.get(j, [])
        wj = w_of_signal.get(j, [])
        add(
            [(y0 + col_of[j], 1.0)] + [(p, -1.0) for p in xs] + [(v, -1.0) for v in wj],
            -np.inf,
            0.0,
        )
        add(
            [(p, 1.0) for p in xs]
            + [(v, 1.0) for v in wj]
            + [(o0 + col_of[j], -1.0)]
            + [(zq, -1.0) for zq in z_of_signal.get(j, [])],
            -np.inf,
            1.0,
        )
    for j in sample:
        # Relative carbons held beyond the signal's capacity (intensity evidence).
        xs = by_signal.get(j, [])
        # A coinciding partner pair counts as one class here too.
        add(
            [(p, rel[pairs[p][0]]) for p in xs]
            + [(p0 + col_of[j], -1.0)]
            + [
                (z0 + q, -min(rel[pairs[zs[q][0]][0]], rel[pairs[zs[q][1]][0]]))
                for q in range(nz)
                if zs[q][2] == j
            ],
            -np.inf,
            _capacity(sigs[j]),
        )
    for q, (pa, pb, _) in enumerate(zs):
        add([(z0 + q, 1.0), (pa, -1.0)], -np.inf, 0.0)
        add([(z0 + q, 1.0), (pb, -1.0)], -np.inf, 0.0)
    for _k, vs in sorted(w_of_class.items()):
        add([(v, 1.0) for v in vs], -np.inf, 1.0)  # one second signal per class
    for q, (_, _, _, near) in enumerate(ws):
        # ... and only beside the class's own first signal.
        add([(w0 + q, 1.0)] + [(p, -1.0) for p in near], -np.inf, 0.0)

    a = coo_array((vals, (rows, cols)), shape=(len(lb), nvar)).tocsr()
    integrality = np.ones(nvar)
    integrality[o0:z0] = 0  # integral at the optimum anyway
    upper = np.ones(nvar)
    upper[o0:z0] = np.inf
    res = milp(
        obj,
        constraints=LinearConstraint(a, np.array(lb), np.array(ub)),
        integrality=integrality,
        bounds=Bounds(np.zeros(nvar), upper),
        options={"presolve": True},
    )
    if res.x is None:
        raise ProcessingError(
            f"the assignment solver failed ({res.message}); this is a bug, please report "
            "it with the structure and the peak list"
        )
    chosen: dict[int, list[tuple[int, float]]] = {}
    for p, (k, j, c) in enumerate(pairs):
        if res.x[p] > 0.5:
            chosen.setdefault(j, []).append((k, c))
    seconds: dict[int, list[tuple[int, float]]] = {}
    for q, (k, j, c, _) in enumerate(ws):
        if res.x[w0 + q] > 0.5:
            seconds.setdefault(j, []).append((k, c))

    out = []
    for j in sorted(set(chosen) | set(seconds)):
        held = sorted(chosen.get(j, []) + seconds.get(j, []))
        ks = tuple(k for k, _ in held)
        cost = sum(c for _, c in held)
        kind = overlap_kind(expectation, sigs[j], ks, cfg)
        notes = []
        if kind is not None:
            labels = " and ".join(classes[k].label for k in ks)
            n_pairs = sum(1 for q in range(nz) if zs[q][2] == j and res.x[z0 + q] > 0.5)
            extra = len(ks) - 1 - n_pairs
            rel_total = sum(rel[k] for k, _ in chosen.get(j, [])) - sum(
                min(rel[pairs[zs[q][0]][0]], rel[pairs[zs[q][1]][0]])
                for q in range(nz)
                if zs[q][2] == j and res.x[z0 + q] > 0.5
            )
            cost += _overlap_penalty(sigs[j], extra, rel_total, cfg) + n_pairs * cfg.partner_cost
            notes.append(
                {
                    "partner": f"coincident pair: {labels} (diastereotopic or rotamer partners)",
                    "supported": f"overlap: {labels} share this signal (intensity and shifts "
                    "agree)",
                    "possible": f"possible overlap: {labels} share this signal",
                    "unsupported": f"overlap without evidence: {labels} share this signal, but "
                    "it is no taller than one carbon",
                }[kind]
            )
        for k, _ in seconds.get(j, []):
            notes.append(
                f"split: second signal of {classes[k].label}, whose symmetry-equivalent "
                "carbons appear apart (hindered rotation or diastereotopic groups?)"
            )
        out.append(Assignment(signal=j, classes=ks, cost=round(cost, 6), note="; ".join(notes)))
    return tuple(out)
