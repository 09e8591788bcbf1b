"""Judge a proposed structure against the observed signals: pass, fail or review.

:func:`judge` runs the assignment (:func:`verify.match.assign`), explains left-over signals
as solvents or laboratory impurities (:func:`verify.impurities.identify`) and applies the
explicit rules below.  Every threshold is a named field of :class:`VerdictConfig`, with a
line justifying its default.  The verdict is the worst severity among the findings:
any ``fail`` → ``"fail"``, else any ``review`` → ``"review"``, else ``"pass"``.

Finding codes (stable; the JSON and the report key on them)

======================== ======== ==========================================================
code                     severity when
======================== ======== ==========================================================
no-sample-signals        fail     no sample signal was observed at all
count-mismatch-<M>       fail/rev per multiplicity M (C, CH, CH2, CH3, or ``signals`` when
                                  the data give no multiplicity): a class with no signal,
                                  an overlap the intensities do not support, or a sample
                                  signal nothing explains.  fail for a missing protonated
                                  carbon, a strong unexplained peak, more unsupported
                                  overlaps than the size allowance, more missing quaternary
                                  carbons than allowed while the quaternary signals seen
                                  are strong; otherwise review (also when the carbon may
                                  lie under a solvent signal near its predicted shift)
multiplicity-unexplained fail/rev an unexplained signal whose confident call fits no class
                                  of the structure at all (review when weak)
multiplicity-mismatch    fail/rev an assigned signal whose call contradicts its class
                                  (fail when the call is confident)
shift-far-outside        fail/rev an assigned carbon far outside its class's shift range
                                  (review when its own prediction agrees with the shift)
shift-outside            rev/info an assigned carbon moderately outside its range (info
                                  when its own prediction agrees with the shift)
shift-prediction         info     an assigned carbon far from its predicted shift (the
                                  prediction still weighs in the assignment and score;
                                  predictors miss by >10 ppm too often to drive a verdict)
coupling-mismatch        review   a C–F/C–P multiplet on a class without that coupling
overlap                  info/rev classes share a signal: info when it is tall (or mixed)
                                  enough for all of them and the predictions agree,
                                  review when that is only partly so
overlap-unsupported      review   such sharing without intensity evidence, within the size
                                  allowance (beyond it: count-mismatch fail)
coincident-pair          info     a diastereotopic/rotamer pair appears as one signal
split-class              review   a class of symmetry-equivalent carbons takes two close
                                  signals (hindered rotation, diastereotopic groups)
low-confidence           review   assigned multiplicity calls below the confidence threshold
minor-signal-assigned    rev/fail a carbon takes a signal the classifier set aside as minor
                                  (fail when the carbon's prediction is also far from it)
no-dept90                review   CH and CH3 told apart from shift alone (no DEPT-90)
carbon-only              review   no edited spectrum: multiplicities unknown
low-snr                  review   median sample SNR below the threshold
reference-offset         review   the axis needed a correction above 1 ppm
reference-none           info     the axis was used as stored in the file
reference-suspect        review   no solvent/TMS line, and the assigned shifts sit off their
                                  predictions by one common amount above 1 ppm
phase-inverted           info     an experiment's stored phase was inverted and corrected
impurity                 info/rev a recognised solvent or impurity (review above a mol %)
mostly-impurity          fail     impurities amount to most of the sample by peak height
solvent-signal           info     the NMR solvent's own carbon signal
data-note                info     a note of the classifier about the data as a whole
======================== ======== ==========================================================

Impurity peaks: the left-over signals are matched against the impurity table; and since
the plain assignment may hand an impurity's line to a class (toluene's CH3 class taking
ethyl acetate's 21.04), each compound recognisable among all signals is also tried as an
exclusion and kept when it lowers the total cost (:func:`_explain`).

:attr:`Verdict.score` is minus the total assignment cost (missing classes, unexplained
peaks, overlaps, and a small charge per impurity signal included): it is comparable between
candidate structures checked against the same observation, higher is better.

References
----------
.. [1] E. Pretsch, P. Bühlmann, M. Badertscher, Structure Determination of Organic Compounds,
   4th ed., Springer 2009 (13C shift ranges and the practice of DEPT-based counting).
.. [2] D. M. Doddrell, D. T. Pegg, M. R. Bendall, J. Magn. Reson. 1982, 48, 323 (DEPT).
.. [3] H. E. Gottlieb, V. Kotlyar, A. Nudelman, J. Org. Chem. 1997, 62, 7512 (impurities).

"""

from __future__ import annotations

from collections.abc import Sequence
from statistics import median
from typing import Any

from verify._verdict_config import VerdictConfig
from verify.classify import observation_to_dict
from verify.impurities import canonical_solvent, identify, load_table
from verify.match import agreement, assign, overlap_kind, range_distance
from verify.model import (
    HYDROGENS,
    MULTIPLICITIES,
    SEVERITIES,
    Assignment,
    CarbonClass,
    Expectation,
    Finding,
    Impurity,
    Observation,
    Verdict,
)
from verify.structure import expectation_to_dict

__all__ = [
    "CAUTION",
    "VerdictConfig",
    "compare_text",
    "format_verdict",
    "judge",
    "rank",
    "verdict_to_dict",
]

#: Shown with every verdict.
CAUTION: str = (
    "This result supports, and does not replace, the release decision of a qualified person "
    "made under the laboratory's own procedures."
)

_IMPURITY_CHARGE = 0.25  # fraction of the unassigned cost charged per impurity signal


def _ppm(x: float) -> str:
    return f"{x:.2f} ppm"


def _carbon(cls: CarbonClass) -> str:
    """Name a carbon as a chemist says it: 'the CH2 of C5', 'the quaternary C7'."""
    if cls.multiplicity == "C":
        return f"the quaternary {cls.label}"
    return f"the {cls.multiplicity} of {cls.label}"


def _join(items: Sequence[str]) -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items)
    return ", ".join(items[:-1]) + " and " + items[-1]


class _Findings:
    def __init__(self) -> None:
        self.items: list[Finding] = []

    def add(
        self,
        code: str,
        severity: str,
        message: str,
        atoms: Sequence[int] = (),
        peaks: Sequence[float] = (),
    ) -> None:
        self.items.append(
            Finding(
                code=code,
                severity=severity,
                message=message,
                atoms=tuple(sorted(set(atoms))),
                peaks=tuple(round(p, 2) for p in peaks),
            )
        )


def _worst(severities: Sequence[str]) -> str:
    return max(severities, key=SEVERITIES.index) if severities else "info"


def judge(
    expectation: Expectation,
    observation: Observation,
    *,
    config: VerdictConfig | None = None,
    solvent: str | None = None,
) -> Verdict:
    """Check one candidate structure against one observation.

    Parameters
    ----------
    expectation : Expectation
        The candidate's carbon classes (shift ranges and predictions in ppm).
    observation : Observation
        The classified signals (ppm on the referenced axis).
    config : VerdictConfig, optional
        Thresholds; defaults as documented there.
    solvent : str, optional
        NMR solvent for the impurity table; default the one the referencing used.

    Returns
    -------
    Verdict
        ``"pass"``, ``"fail"`` or ``"review"`` with the assignment, findings (codes in
        the module docstring), recognised impurities and a fit score.

    References
    ----------
    .. [1] Pretsch et al., Structure Determination of Organic Compounds, 2009.
    .. [2] Gottlieb, Kotlyar, Nudelman, J. Org. Chem. 1997, 62, 7512.

    """
    cfg = config or VerdictConfig()
    exp, obs = expectation, observation
    sigs = obs.signals
    classes = exp.classes
    fx = _Findings()
    solvent_name = canonical_solvent(solvent) if solvent else obs.referencing.solvent
    assignment, impurities, cost = _explain(exp, obs, solvent_name, cfg)

    sig_of_class: dict[int, int] = {}
    for a in assignment:
        for k in a.classes:
            sig_of_class[k] = a.signal
    assigned = {a.signal for a in assignment}
    sample = [j for j, s in enumerate(sigs) if s.role == "sample"]
    leftover = [
        j for j, s in enumerate(sigs) if j not in assigned and s.role in ("sample", "impurity")
    ]
    carbons_of = {a.signal: sum(classes[k].carbons for k in a.classes) for a in assignment}
    explained = {i for imp in impurities for i in imp.signals}
    unexplained = [j for j in leftover if j not in explained and sigs[j].role == "sample"]

    # ---------------------------------------------------------------- data as a whole
    if not sample:
        fx.add("no-sample-signals", "fail", "No carbon signal of the sample was observed.")
    called = [j for j in sample if sigs[j].multiplicity is not None or sigs[j].candidates]
    carbon_only = obs.mode == "carbon-only" or (bool(sample) and not called)
    if carbon_only:
        fx.add(
            "carbon-only",
            "review",
            "Only the broadband carbon spectrum gives signals here: multiplicities are "
            "unknown, so only the number of signals and their shift ranges were checked.",
        )
    elif "dept90" not in obs.experiments and any(
        sigs[j].multiplicity in ("CH", "CH3") or {"CH", "CH3"} <= set(sigs[j].candidates)
        for j in sample
    ):
        fx.add(
            "no-dept90",
            "review",
            "Without a DEPT-90 spectrum, CH and CH3 were told apart from their shifts alone.",
        )
    snrs = [sigs[j].snr for j in sample if sigs[j].snr > 0]
    if snrs and median(snrs) < cfg.min_sample_snr:
        fx.add(
            "low-snr",
            "review",
            f"The sample signals are weak (median SNR {median(snrs):.1f}, below "
            f"{cfg.min_sample_snr:g}): weak carbons may be missing.",
        )
    ref = obs.referencing
    if abs(ref.offset_ppm) > cfg.reference_offset_review_ppm:
        fx.add(
            "reference-offset",
            "review",
            f"The shift axis needed a correction of {ref.offset_ppm:+.2f} ppm "
            f"({ref.method}); check the solvent and reference.",
        )
    elif ref.method == "none":
        fx.add("reference-none", "info", "The shift axis was used as stored in the file.")
    if ref.method in ("none", "file"):
        drift = _axis_drift([(sigs[j].ppm, classes[k]) for k, j in sig_of_class.items()], cfg)
        if drift is not None:
            fx.add(
                "reference-suspect",
                "review",
                f"No solvent or TMS signal was found to check the shift axis, and the assigned "
                f"shifts sit {drift:+.1f} ppm from their predictions as a whole: the axis may "
                "be mis-referenced; reference it and check again.",
            )
    for role in obs.inverted:
        fx.add(
            "phase-inverted",
            "info",
            f"The {role} spectrum was stored with inverted phase and was corrected.",
        )
    for note in obs.notes:
        fx.add("data-note", "info", note)

    # ------------------------------------------------------------- assigned signals
    signals_of: dict[int, list[int]] = {}
    for a in assignment:
        for k in a.classes:
            signals_of.setdefault(k, []).append(a.signal)
    for k, js in sorted(signals_of.items()):
        if len(js) > 1:
            cls = classes[k]
            fx.add(
                "split-class",
                "review",
                f"{cls.label} ({cls.carbons} carbons equivalent by symmetry) appears as "
                f"{len(js)} signals at {_join([_ppm(sigs[j].ppm) for j in js])}: hindered "
                "rotation or diastereotopic groups would explain it; so would a less "
                "symmetric structure.",
                cls.atoms,
                [sigs[j].ppm for j in js],
            )
    low_conf: list[int] = []
    n_unsupported = 0
    unsupported_at: dict[int, float] = {}  # class → shift of the signal it would share
    unsupported_group: dict[int, tuple[CarbonClass, ...]] = {}  # … and every class on it
    unsupported_items: dict[str, list[tuple[str, int]]] = {m: [] for m in MULTIPLICITIES}
    for a in assignment:
        s = sigs[a.signal]
        for k in a.classes:
            cls = classes[k]
            how = agreement(cls.multiplicity, s)
            if how == "contradiction":
                # the class lies outside every candidate: what counts is how sure the
                # signal is one of them (a CH-or-CH3 at 55 ppm rules out a CH2 firmly
                # even when CH3 over CH is only a shift-region call)
                sure = max(s.confidence, s.candidates_confidence or 0.0)
                sev = "fail" if sure >= cfg.confident else "review"
                seen = s.multiplicity or "/".join(s.candidates)
                if len(s.candidates) > 1 and not s.mixed and sure > s.confidence:
                    seen += f" (or {' or '.join(c for c in s.candidates if c != seen)})"
                fx.add(
                    "multiplicity-mismatch",
                    sev,
                    f"{cls.label} is a {cls.multiplicity} in the structure, but the signal at "
                    f"{_ppm(s.ppm)} looks like a {seen} "
                    f"(confidence {sure:.2f}).",
                    cls.atoms,
                    (s.ppm,),
                )
            d = range_distance(cls, s.ppm)
            lo, hi = cls.shift_range
            # A prediction for this very structure that agrees with the observed shift
            # says the handbook range is too narrow here: one severity step milder.
            vouched = cls.predicted_ppm is not None and abs(s.ppm - cls.predicted_ppm) <= (
                2.0 * (cls.prediction_sd or cfg.prediction_sd_ppm)
            )
            if d > cfg.far_outside_ppm:
                fx.add(
                    "shift-far-outside",
                    "review" if vouched else "fail",
                    f"{cls.label} ({cls.environment}) is expected at {lo:g}–{hi:g} ppm, but its "
                    f"best signal is at {_ppm(s.ppm)}, {d:.1f} ppm outside.",
                    cls.atoms,
                    (s.ppm,),
                )
            elif d > cfg.outside_review_ppm:
                fx.add(
                    "shift-outside",
                    "info" if vouched else "review",
                    f"{cls.label} ({cls.environment}) is expected at {lo:g}–{hi:g} ppm; its "
                    f"signal at {_ppm(s.ppm)} is {d:.1f} ppm outside.",
                    cls.atoms,
                    (s.ppm,),
                )
            if cls.predicted_ppm is not None:
                sd = cls.prediction_sd or cfg.prediction_sd_ppm
                if abs(s.ppm - cls.predicted_ppm) > cfg.prediction_review_sd * sd:
                    fx.add(
                        "shift-prediction",
                        "info",
                        f"{cls.label} is predicted at {_ppm(cls.predicted_ppm)} "
                        f"(± {sd:.1f}), but is assigned to {_ppm(s.ppm)}.",
                        cls.atoms,
                        (s.ppm,),
                    )
        if s.pattern in ("C-F", "C-P"):
            flag = "coupled-F" if s.pattern == "C-F" else "coupled-P"
            nuc = "19F" if s.pattern == "C-F" else "31P"
            if not any(
                flag in classes[k].flags or any(c.nucleus == nuc for c in classes[k].couplings)
                for k in a.classes
            ):
                fx.add(
                    "coupling-mismatch",
                    "review",
                    f"The signal at {_ppm(s.ppm)} is split like a {s.pattern} multiplet, but "
                    f"{_join([classes[k].label for k in a.classes])} has no such coupling.",
                    [x for k in a.classes for x in classes[k].atoms],
                    (s.ppm,),
                )
        if s.multiplicity is not None and s.confidence < cfg.low_confidence:
            low_conf.append(a.signal)
        if s.role == "impurity":
            # a minor line can hold a weak carbon of the sample, but not one whose own
            # prediction is as far off as a shift-prediction finding: two independent
            # signs that it belongs to something else
            off_prediction = [
                classes[k]
                for k in a.classes
                if classes[k].predicted_ppm is not None
                and abs(s.ppm - float(classes[k].predicted_ppm or 0.0))
                > cfg.prediction_review_sd * (classes[k].prediction_sd or cfg.prediction_sd_ppm)
            ]
            also = (
                f"; {_join([c.label for c in off_prediction])} is also predicted far from it"
                f" ({_join([_ppm(float(c.predicted_ppm or 0.0)) for c in off_prediction])})"
                if off_prediction
                else ""
            )
            fx.add(
                "minor-signal-assigned",
                "fail" if off_prediction else "review",
                f"{_join([classes[k].label for k in a.classes])} is assigned to the weak signal "
                f"at {_ppm(s.ppm)}, which the classifier took for a minor component "
                f"({s.reason or 'not in the carbon spectrum'}){also}; confirm it belongs to the "
                "sample.",
                [x for k in a.classes for x in classes[k].atoms],
                (s.ppm,),
            )
        kind = overlap_kind(exp, s, a.classes, cfg)
        labels = _join([classes[k].label for k in a.classes])
        atoms = [x for k in a.classes for x in classes[k].atoms]
        if kind == "partner":
            fx.add(
                "coincident-pair",
                "info",
                f"{labels} (a diastereotopic or rotamer pair) appear as one signal at "
                f"{_ppm(s.ppm)}.",
                atoms,
                (s.ppm,),
            )
        elif kind == "supported":
            fx.add(
                "overlap",
                "info",
                f"{labels} overlap at {_ppm(s.ppm)}: the signal is tall enough for "
                f"{s.carbons} carbons and the shifts agree.",
                atoms,
                (s.ppm,),
            )
        elif kind == "possible":
            fx.add(
                "overlap",
                "review",
                f"{labels} are taken to overlap at {_ppm(s.ppm)}, which the intensity or "
                "the predicted shifts only partly support; confirm, e.g. in HSQC.",
                atoms,
                (s.ppm,),
            )
        elif kind == "unsupported":
            # Each extra class beyond the first (and beyond partner pairs) is one overlap.
            held = sorted(a.classes, key=lambda k: -classes[k].carbons)
            for k in held[1:]:
                if HYDROGENS[classes[k].multiplicity] > 0:
                    n_unsupported += 1  # quaternary ones count with the missing quaternaries
                unsupported_items[classes[k].multiplicity].append((classes[k].label, k))
                unsupported_at[k] = s.ppm
                unsupported_group[k] = tuple(classes[m] for m in a.classes)
    if low_conf:
        fx.add(
            "low-confidence",
            "review",
            f"The multiplicity calls at {_join([_ppm(sigs[j].ppm) for j in low_conf])} are "
            f"uncertain (confidence below {cfg.low_confidence:g}).",
            (),
            [sigs[j].ppm for j in low_conf],
        )

    # ----------------------------------------------------------------------- counts
    allowance = len(classes) // cfg.overlap_allowance_classes
    overlap_sev = "fail" if n_unsupported > allowance else "review"
    missing = [k for k in range(len(classes)) if k not in sig_of_class]
    missing_q = [k for k in missing if HYDROGENS[classes[k].multiplicity] == 0]
    # Quaternary carbons without a signal of their own: missing or in unsupported overlaps.
    q_deficit = len(missing_q) + len(unsupported_items["C"])
    heights = [
        sigs[j].height / max(1, carbons_of.get(j, 1)) for j in assigned if sigs[j].height > 0
    ]
    ref_height = median(heights) if heights else None
    weak_data = bool(snrs) and median(snrs) < cfg.min_sample_snr
    # Quaternary carbons are the first to vanish: judge their absence by how weak the
    # quaternary signals that were seen are (none seen: as weak as can be).
    q_snrs = [sigs[j].snr for j in sample if sigs[j].multiplicity == "C" and sigs[j].snr > 0]
    q_weak = weak_data or (
        q_deficit > 0 and (not q_snrs or median(q_snrs) < cfg.weak_quaternary_snr)
    )

    def is_weak(j: int) -> bool:
        s = sigs[j]
        return ref_height is not None and 0 < s.height < cfg.weak_extra_ratio * ref_height

    groups: list[tuple[str, Sequence[str | None]]] = [(m, (m,)) for m in MULTIPLICITIES]
    groups.append(("signals", (None,)))
    for name, calls in groups:
        if name == "signals":
            exp_n = len(classes) if carbon_only else 0
            miss = list(missing) if carbon_only else []
            unsup = (
                [k for m in MULTIPLICITIES for _, k in unsupported_items[m]] if carbon_only else []
            )
            extra = [j for j in unexplained if sigs[j].multiplicity is None]
            obs_n = sum(1 for j in sample if sigs[j].multiplicity is None and j not in explained)
        else:
            if carbon_only:
                continue
            exp_n = sum(1 for c in classes if c.multiplicity == name)
            miss = [k for k in missing if classes[k].multiplicity == name]
            unsup = [k for _, k in unsupported_items[name]]
            extra = [j for j in unexplained if sigs[j].multiplicity == name]
            obs_n = sum(1 for j in sample if sigs[j].multiplicity in calls and j not in explained)
        if not (miss or unsup or extra):
            continue
        sevs: list[str] = []
        parts: list[str] = []
        for k in miss:
            cls = classes[k]
            hidden = _hidden_under_solvent(cls, obs, cfg)
            if hidden is not None:
                sevs.append("review")
                parts.append(
                    f"{_carbon(cls)} has no signal of its own; it may lie "
                    f"under the solvent signal at {_ppm(hidden)}"
                )
            elif HYDROGENS[cls.multiplicity] == 0 and (
                q_weak or q_deficit <= cfg.max_missing_quaternary
            ):
                sevs.append("review")
                why = (
                    f"the quaternary signals seen are weak, median SNR {median(q_snrs):.0f}"
                    if q_weak and q_snrs
                    else "quaternary carbons are often weak"
                )
                parts.append(f"the quaternary {cls.label} has no signal ({why})")
            else:
                sevs.append("review" if weak_data else "fail")
                parts.append(f"{_carbon(cls)} has no signal")
        for k in unsup:
            hidden = _hidden_under_solvent(classes[k], obs, cfg)
            if hidden is not None:
                sevs.append("review")
                parts.append(
                    f"{classes[k].label} has no signal of its own; it may lie under the solvent "
                    f"signal at {_ppm(hidden)}"
                )
                continue
            far = _implausible_coincidence(unsupported_group.get(k, ()), unsupported_at.get(k), cfg)
            if far is not None:
                z, worst = far
                sevs.append("fail")
                parts.append(
                    f"{_carbon(classes[k])} has no signal of its own; sharing the signal at "
                    f"{_ppm(unsupported_at[k])} would put {worst.label} {z:.1f} SD from its "
                    f"predicted shift ({worst.predicted_ppm:.1f} ppm)"
                )
                continue
            if HYDROGENS[classes[k].multiplicity] == 0:
                ok = q_weak or q_deficit <= cfg.max_missing_quaternary
                sevs.append("review" if ok else "fail")
            else:
                sevs.append(overlap_sev)
            parts.append(
                f"{_carbon(classes[k])} has no signal of its own "
                "(it would have to coincide with another carbon on a signal no taller than one)"
            )
        for j in extra:
            weak = is_weak(j)
            sevs.append("review" if weak else "fail")
            what = "weak signal" if weak else "signal"
            parts.append(f"the {what} at {_ppm(sigs[j].ppm)} is not explained")
        unit = name if name != "signals" else "signals"
        head = f"expected {exp_n} {unit}, observed {obs_n}"
        fx.add(
            f"count-mismatch-{name}",
            _worst(sevs),
            f"{head}: {'; '.join(parts)}.",
            [a for k in (*miss, *unsup) for a in classes[k].atoms],
            [sigs[j].ppm for j in extra],
        )
    present = {c.multiplicity for c in classes}
    for j in unexplained:
        s = sigs[j]
        if (
            s.multiplicity is not None
            and s.confidence >= cfg.confident
            and s.multiplicity not in present
            and not (set(s.candidates) & present)
        ):
            fx.add(
                "multiplicity-unexplained",
                "review" if is_weak(j) else "fail",
                f"The {s.multiplicity} signal at {_ppm(s.ppm)} fits no carbon of the structure, "
                f"which has no {s.multiplicity} at all.",
                (),
                (s.ppm,),
            )
    if n_unsupported and overlap_sev == "review":
        fx.add(
            "overlap-unsupported",
            "review",
            f"{n_unsupported} accidental overlap(s) without intensity evidence were needed to "
            "make the counts fit; within the allowance for a structure of this size.",
        )

    # ------------------------------------------------------------------ impurities
    kinds = {e.name: e.kind for e in load_table()}
    total = 0.0
    for imp in impurities:
        peaks = [sigs[i].ppm for i in imp.signals]
        if kinds.get(imp.name) == "nmr-solvent":
            fx.add(
                "solvent-signal",
                "info",
                f"{imp.name} at {_join([_ppm(p) for p in peaks])}.",
                (),
                peaks,
            )
            continue
        if imp.mol_percent is None:
            sev, amount = "review", "amount not estimated"
        else:
            total += imp.mol_percent
            sev = "review" if imp.mol_percent >= cfg.impurity_review_mol_percent else "info"
            amount = f"about {imp.mol_percent:.0f} mol % by peak height (rough)"
        fx.add(
            "impurity",
            sev,
            f"{imp.name} ({_join([_ppm(p) for p in peaks])}), {amount}.",
            (),
            peaks,
        )
    if total >= cfg.impurity_fail_mol_percent:
        fx.add(
            "mostly-impurity",
            "fail",
            f"Recognised solvents and impurities amount to about {total:.0f} mol % by peak "
            "height: the sample is mostly not the compound.",
        )

    findings = tuple(fx.items)
    verdict = _worst([f.severity for f in findings])
    word = {"info": "pass", "review": "review", "fail": "fail"}[verdict]
    return Verdict(
        verdict=word,
        expectation=exp,
        observation=obs,
        assignment=assignment,
        findings=findings,
        impurities=impurities,
        score=round(-cost, 3),
    )


def _axis_drift(pairs: Sequence[tuple[float, CarbonClass]], cfg: VerdictConfig) -> float | None:
    """Estimate the common offset of observed shifts from their predictions.

    Each assigned class with a confident prediction (SD at most
    ``cfg.drift_max_prediction_sd``) gives one residual, observed − predicted.  Their
    median is the axis drift; it counts when it exceeds
    ``cfg.reference_offset_review_ppm`` and ``cfg.drift_significance`` times its standard
    error (1.2533 · 1.4826 · MAD / √n, the standard error of a median under normal
    errors), with at least ``cfg.drift_min_carbons`` residuals.

    Returns
    -------
    float or None
        The drift in ppm, or None when there is none to report.

    References
    ----------
    .. [1] F. R. Hampel, J. Am. Stat. Assoc. 1974, 69, 383 (MAD as a robust scale).

    """
    residuals = [
        ppm - cls.predicted_ppm
        for ppm, cls in pairs
        if cls.predicted_ppm is not None
        and cls.prediction_sd is not None
        and cls.prediction_sd <= cfg.drift_max_prediction_sd
    ]
    if len(residuals) < cfg.drift_min_carbons:
        return None
    centre = median(residuals)
    spread = 1.4826 * median(abs(r - centre) for r in residuals)
    error = 1.2533 * max(spread, cfg.min_prediction_sd) / len(residuals) ** 0.5
    if (
        abs(centre) > cfg.reference_offset_review_ppm
        and abs(centre) > cfg.drift_significance * error
    ):
        return float(centre)
    return None


def _implausible_coincidence(
    group: Sequence[CarbonClass], ppm: float | None, cfg: VerdictConfig
) -> tuple[float, CarbonClass] | None:
    """Judge whether classes sharing one signal could all resonate there.

    An accidental overlap without intensity evidence is a fair explanation of a missing
    signal only where every carbon on the signal could resonate.  When the predicted
    shift of one of them lies more than ``cfg.implausible_overlap_sd`` prediction SDs
    from the shared signal, the coincidence is not credible and the carbon counts as
    missing.

    Returns
    -------
    tuple of (float, CarbonClass) or None
        The largest distance in SD and the class it belongs to, when implausible;
        None when the coincidence is plausible or nothing was predicted.

    """
    if ppm is None:
        return None
    worst: tuple[float, CarbonClass] | None = None
    for cls in group:
        if cls.predicted_ppm is None or not cls.prediction_sd:
            continue
        z = abs(ppm - cls.predicted_ppm) / max(cls.prediction_sd, cfg.min_prediction_sd)
        if worst is None or z > worst[0]:
            worst = (z, cls)
    return worst if worst is not None and worst[0] > cfg.implausible_overlap_sd else None


def _total_cost(
    exp: Expectation,
    obs: Observation,
    assignment: Sequence[Assignment],
    explained: set[int],
    cfg: VerdictConfig,
) -> float:
    """Sum the assignment cost, missing classes, unexplained and impurity-explained signals."""
    held = {k for a in assignment for k in a.classes}
    assigned = {a.signal for a in assignment}
    cost = sum(a.cost for a in assignment)
    cost += sum(
        cfg.missing_cost if HYDROGENS[c.multiplicity] else cfg.missing_quaternary_cost
        for k, c in enumerate(exp.classes)
        if k not in held
    )
    for j, s in enumerate(obs.signals):
        if s.role != "sample" or j in assigned:
            continue
        share = _IMPURITY_CHARGE if j in explained else 1.0
        snr_f = 1.0 if s.snr <= 0 else min(1.0, max(0.25, s.snr / cfg.weak_snr))
        cost += share * cfg.unassigned_cost * snr_f
    return cost


def _explain(
    exp: Expectation, obs: Observation, solvent: str | None, cfg: VerdictConfig
) -> tuple[tuple[Assignment, ...], tuple[Impurity, ...], float]:
    """Assign, recognise impurities, and re-assign where an impurity took a sample peak.

    The plain assignment may give a class an impurity's line (toluene's CH3 class takes
    ethyl acetate's 21.04 CH3 when it is closer to the prediction than toluene's own
    21.46).  Every compound recognisable among *all* signals is therefore tried as an
    exclusion, greedily by size, and kept when it lowers the total cost; a structure
    that owns those peaks keeps them, as its classes would otherwise go missing.
    """
    sigs = obs.signals
    pool = [j for j, s in enumerate(sigs) if s.role in ("sample", "impurity")]

    def run(excluded: set[int]) -> tuple[tuple[Assignment, ...], tuple[Impurity, ...], float]:
        a = assign(exp, obs, config=cfg, exclude=excluded)
        assigned = {x.signal for x in a}
        carbons = {x.signal: sum(exp.classes[k].carbons for k in x.classes) for x in a}
        left = [j for j in pool if j not in assigned]
        imps = identify(obs, left, solvent, sample_carbons=carbons)
        explained = {i for imp in imps for i in imp.signals}
        return a, imps, _total_cost(exp, obs, a, explained, cfg)

    best = run(set())
    if not exp.classes:
        return best
    found = {i for imp in best[1] for i in imp.signals}
    trials = sorted(identify(obs, pool, solvent), key=lambda imp: (-len(imp.signals), imp.name))
    excluded: set[int] = set()
    for imp in trials:
        if set(imp.signals) <= found | excluded:
            continue
        trial = run(excluded | set(imp.signals))
        if trial[2] < best[2] - 1e-9:
            best, excluded = trial, excluded | set(imp.signals)
    return best


def _hidden_under_solvent(cls: CarbonClass, obs: Observation, cfg: VerdictConfig) -> float | None:
    """Shift of a solvent signal that could hide the class (in range, near its prediction).

    Near means within one prediction sigma and ``solvent_hiding_ppm``: a loose match
    would let a homologue's extra carbon "hide" under any solvent line.
    """
    for s in obs.signals:
        if s.role != "solvent" or range_distance(cls, s.ppm) > 0:
            continue
        if cls.predicted_ppm is not None:
            sd = cls.prediction_sd or cfg.prediction_sd_ppm
            if abs(s.ppm - cls.predicted_ppm) > min(sd, cfg.solvent_hiding_ppm):
                continue
        return s.ppm
    return None


def rank(
    expectations: Sequence[Expectation],
    observation: Observation,
    *,
    config: VerdictConfig | None = None,
) -> list[Verdict]:
    """Judge several candidates against one observation, best fit first.

    Parameters
    ----------
    expectations : sequence of Expectation
        Candidate structures.
    observation : Observation
        The classified signals.
    config : VerdictConfig, optional
        Thresholds.

    Returns
    -------
    list of Verdict
        By descending score; ties keep the input order.

    """
    verdicts = [judge(e, observation, config=config) for e in expectations]
    order = sorted(range(len(verdicts)), key=lambda i: (-verdicts[i].score, i))
    return [verdicts[i] for i in order]


def _name(v: Verdict) -> str:
    return v.expectation.name or v.expectation.structure or "candidate"


def compare_text(verdicts: Sequence[Verdict]) -> str:
    """Say which candidate the data support, and by how much.

    Parameters
    ----------
    verdicts : sequence of Verdict
        Candidates checked against the same observation (any order).

    Returns
    -------
    str
        One or two sentences.  The margin is given in score units and in "unexplained
        peaks" (one strong unexplained peak costs ``VerdictConfig.unassigned_cost``).

    """
    if not verdicts:
        return "No candidate was checked.\n"
    vs = sorted(verdicts, key=lambda v: -v.score)
    best = vs[0]
    if len(vs) == 1:
        return f"One candidate: {_name(best)} ({best.verdict}).\n"
    second = vs[1]
    delta = best.score - second.score
    peaks = delta / VerdictConfig().unassigned_cost
    if delta < 1.0:
        strength = "The data barely distinguish"
    elif delta < 4.0:
        strength = "The data slightly favour"
    elif delta < 12.0:
        strength = "The data clearly favour"
    else:
        strength = "The data decisively favour"
    if delta < 1.0:
        text = (
            f"{strength} {_name(best)} ({best.verdict}) and {_name(second)} "
            f"({second.verdict}): score difference {delta:.1f}."
        )
    else:
        text = (
            f"{strength} {_name(best)} ({best.verdict}, score {best.score:.1f}) over "
            f"{_name(second)} ({second.verdict}, score {second.score:.1f}): a margin of "
            f"{delta:.1f}, worth about {peaks:.1f} unexplained peak(s)."
        )
    if best.verdict != "pass":
        text += f" Even the best candidate is '{best.verdict}'."
    return text + "\n"


def _assignment_rows(v: Verdict) -> list[dict[str, Any]]:
    rows = []
    sigs = v.observation.signals
    classes = v.expectation.classes
    for a in v.assignment:
        s = sigs[a.signal]
        rows.append(
            {
                "peak": round(s.ppm, 3),
                "signal": a.signal,
                "atoms": sorted(x for k in a.classes for x in classes[k].atoms),
                "classes": list(a.classes),
                "labels": [classes[k].label for k in a.classes],
                "multiplicity": s.multiplicity,
                "expected_multiplicity": [classes[k].multiplicity for k in a.classes],
                "cost": a.cost,
                "note": a.note,
            }
        )
    return rows


def verdict_to_dict(v: Verdict) -> dict[str, Any]:
    """Convert a verdict to plain JSON-ready data.

    Parameters
    ----------
    v : Verdict
        A verdict from :func:`judge`.

    Returns
    -------
    dict
        Keys ``verdict``, ``caution``, ``score``, ``assignment`` (peak in ppm, signal
        index, atoms, class indices and labels, multiplicity, note), ``missing`` (class
        labels with no signal), ``findings`` (code, severity, message, atoms, peaks) and
        ``impurities`` (name, peaks in ppm, mol_percent, source); plus ``expected`` (as
        :func:`verify.structure.expectation_to_dict`) and ``observed`` (as
        :func:`verify.classify.observation_to_dict`).

    """
    sigs = v.observation.signals
    held = {k for a in v.assignment for k in a.classes}
    out: dict[str, Any] = {
        "verdict": v.verdict,
        "caution": CAUTION,
        "score": v.score,
        "assignment": _assignment_rows(v),
        "missing": [c.label for k, c in enumerate(v.expectation.classes) if k not in held],
        "findings": [
            {
                "code": f.code,
                "severity": f.severity,
                "message": f.message,
                "atoms": list(f.atoms),
                "peaks": list(f.peaks),
            }
            for f in v.findings
        ],
        "impurities": [
            {
                "name": imp.name,
                "peaks": [round(sigs[i].ppm, 3) for i in imp.signals],
                "mol_percent": imp.mol_percent,
                "source": imp.source,
            }
            for imp in v.impurities
        ],
    }
    out["expected"] = expectation_to_dict(v.expectation)
    out["observed"] = observation_to_dict(v.observation)
    return out


def _impurity_line(imp: Impurity) -> str:
    amount = "" if imp.mol_percent is None else f" (~{imp.mol_percent:.0f} mol %)"
    return f"{imp.name}{amount}"


def format_verdict(v: Verdict) -> str:
    """Short console summary of a verdict, the caution included.

    Parameters
    ----------
    v : Verdict
        A verdict from :func:`judge`.

    Returns
    -------
    str
        A few lines ending in a newline: verdict and candidate, a tally, the fail and
        review findings (info findings counted), the impurities and the caution.

    """
    classes = v.expectation.classes
    held = {k for a in v.assignment for k in a.classes}
    sample = v.observation.sample_signals
    lines = [f"{v.verdict.upper()}: {_name(v)}"]
    lines.append(
        f"  {len(held)} of {len(classes)} carbon classes assigned to "
        f"{len(v.assignment)} of {len(sample)} sample signals; score {v.score:.1f}"
    )
    shown = [f for f in v.findings if f.severity != "info"]
    shown.sort(key=lambda f: -SEVERITIES.index(f.severity))
    for f in shown:
        lines.append(f"  {f.severity:<6} {f.code}: {f.message}")
    n_info = len(v.findings) - len(shown)
    if n_info:
        lines.append(f"  ({n_info} informational finding(s) in the full report)")
    others = [i for i in v.impurities if not i.name.startswith("NMR solvent")]
    if others:
        lines.append("  impurities: " + ", ".join(_impurity_line(i) for i in others))
    lines.append(f"  {CAUTION}")
    return "\n".join(lines) + "\n"
