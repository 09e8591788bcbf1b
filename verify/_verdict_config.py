"""The one set of named thresholds shared by :mod:`verify.match` and :mod:`verify.verdict`.

Kept in its own module so that the assignment and the verdict read the same numbers without
importing each other; :mod:`verify.verdict` re-exports :class:`VerdictConfig`.

Costs are in dimensionless units, roughly negative log-odds: 1 is "a little unlikely",
4 "as bad as one unexplained strong peak", 12 "a confident contradiction".
"""

from __future__ import annotations

from dataclasses import dataclass

from verify.errors import UsageError

__all__ = ["VerdictConfig"]


@dataclass(frozen=True)
class VerdictConfig:
    """Every cost and threshold of the assignment and of the verdict rules.

    Parameters
    ----------
    contradiction_cost : float
        Cost of a class on a signal whose call contradicts it, times the call's confidence:
        above ``missing_cost + unassigned_cost`` so that a confident contradiction is never
        preferred to leaving both unexplained.
    candidate_cost : float
        Cost, times confidence, of a class that is among the signal's candidates but not
        its first call (e.g. CH3 on a DEPT-135-only "CH or CH3" signal): a mild doubt.
    range_scale_ppm : float
        Shift distance outside a class's handbook range that costs 1 (quadratic beyond):
        4 ppm is about the spread of substituent effects a coarse range cannot capture
        (Pretsch et al., Structure Determination of Organic Compounds, 13C tables).
    prediction_sd_ppm : float
        Default one-sigma error of a predicted shift when the class gives none: 2.5 ppm is
        a typical mean absolute error of HOSE-code/increment predictors for 13C (Kuhn &
        Schlörer, Magn. Reson. Chem. 2015, 53, 582; from memory).
    prediction_huber : float
        Beyond this many sigmas the prediction cost grows linearly (Huber), so one bad
        prediction cannot dominate the assignment.
    vouched_range_factor : float
        Factor on the range cost when the class's own prediction lies within two sigma
        of the signal: the structure-specific estimate outweighs the coarse range.
    prediction_cap : float
        Largest prediction cost of one pair.  Predictors err by 10-20 ppm on a few per
        cent of carbons (measured: 5.8 % of the nmrshiftdb2-derived classes are more than
        4 sigma off with verify.predict), so the cost stays below an unexplained peak.
    missing_cost : float
        Cost of a protonated class with no signal at all.
    missing_quaternary_cost : float
        The same for a quaternary class: lower, as quaternary carbons are often weak
        (no NOE, long T1; common practice).
    unassigned_cost : float
        Cost of a strong sample signal that no class takes.
    weak_snr : float
        Signals with SNR below this cost less when unassigned (in proportion, at least a
        quarter): weak peaks are more often impurities or artefacts.
    minor_signal_cost : float
        Extra cost of a class on a signal the classifier set aside as a minor component
        (seen in an edited spectrum but not in the carbon spectrum): DEPT is more
        sensitive than the broadband spectrum, so a weak sample CH may be such a signal,
        but a sample signal is preferred.
    overlap_cost : float
        Cost of each extra class on one signal without evidence for an overlap.
    supported_overlap_cost : float
        The same when the signal is tall enough for two carbons (``Signal.carbons``) or
        its edited-spectrum behaviour is mixed: an accidental overlap is then likely.
    overlap_prediction_ppm : float
        Predicted shifts of two classes closer than this (ppm) make their coincidence
        plausible without intensity evidence (review rather than fail): 2 ppm, below a
        predictor's typical error, so mostly alike environments qualify; a homologue's
        extra CH2 is usually predicted further from its neighbour (heptane C4 vs C3/C5,
        ~3 ppm; Gottlieb 1997 / Pretsch 2009 alkane values).
    partner_cost : float
        Cost of a diastereotopic or rotamer pair (``CarbonClass.partner``) on one signal:
        small, such pairs often coincide at 1-2 Hz resolution (common practice).
    split_cost : float
        Extra cost of a class of symmetry-equivalent carbons taking a second signal:
        below an unexplained peak, as hindered rotation and diastereotopic groups in
        chiral molecules split such classes often (common practice).
    split_window_ppm : float
        Largest distance (ppm) between the two signals of a split class: such splittings
        are usually a few tenths of a ppm, rarely above 1 ppm (common practice).
    coupling_mismatch_cost : float
        A C–F/C–P multiplet on a class that has no such coupling.
    coupling_unseen_cost : float
        A class with a one- or two-bond C–F/C–P coupling on a signal showing no splitting.
    intensity_hint_cost : float
        A one-carbon class alone on a signal that looks like two carbons: weak, since
        carbon-13 heights vary with relaxation and NOE.
    confident : float
        Calls at or above this confidence make a contradiction a ``fail`` (below: review).
    low_confidence : float
        Assigned calls below this confidence make the verdict ``review``.
    outside_review_ppm : float
        An assigned shift this far outside its class's range needs review.
    far_outside_ppm : float
        This far outside is a ``fail``: 10 ppm is beyond any substituent effect a
        handbook range leaves out (common practice).
    prediction_review_sd : float
        A shift more than this many prediction sigmas from its prediction is reported
        (as information: with verify.predict, 39 % of the nmrshiftdb2-derived molecules
        have a carbon beyond 4 sigma and 1.5 % beyond 10, so the prediction informs the
        assignment and the score but does not decide the verdict).
    weak_extra_ratio : float
        An unexplained signal below this fraction of the median sample height is taken
        as a minor component (review), above it as a sample-level peak (fail).
    min_sample_snr : float
        Median SNR of the sample signals below which the data need review: at SNR < 10
        quaternary and weak carbons are easily lost (common practice).
    overlap_allowance_classes : int
        One unsupported overlap per this many expected classes is tolerated as review
        (accidental coincidences grow with molecular size); more is a fail.  6: on the
        nmrshiftdb2-derived benchmark it turns true-structure fails from 1.4 % to 1.1 %
        while same-formula decoys with another CHn inventory still fail at 99.5 %.
    implausible_overlap_sd : float
        An unsupported overlap fails when the coinciding carbon's predicted shift is
        more than this many prediction SDs from the signal it would share: with the
        predictor's SDs calibrated to ~93 % coverage at 2 SD on the nmrshiftdb2-derived
        set, fewer than ~3 % of true carbons lie beyond 3 SD, while a homologue's extra
        CH2 forced onto a neighbour's signal typically lies 4–10 SD away.
    min_prediction_sd : float
        Floor in ppm on a prediction SD used in that test, so that a very confident
        prediction does not turn a 1–2 ppm coincidence into a fail.
    drift_max_prediction_sd : float
        Only predictions with an SD up to this (ppm) take part in the axis-drift check
        made when no solvent or TMS line referenced the axis.  4 ppm keeps aromatic,
        sp3 and most quaternary predictions.  Measured on the nmrshiftdb2-derived set
        (ideal observations, axis marked unreferenced): the check fires for 1.2 % of true
        structures on a correct axis and for 6–9 % with the axis off by ±1.8 ppm — a
        conservative safeguard, since ~3 ppm prediction errors hide small drifts.
    drift_min_carbons : int
        Residuals needed before a common drift is judged: fewer say little.
    drift_significance : float
        The median residual must exceed this many of its standard errors (3: a chance
        drift that large occurs in well under 1 % of correctly referenced samples,
        under normal errors).
    max_missing_quaternary : int
        Missing quaternary classes up to this number are review, beyond it fail (unless
        the quaternary signals are weak, see ``weak_quaternary_snr``).
    weak_quaternary_snr : float
        When the quaternary signals that were seen have a median SNR below this, any
        number of missing quaternary carbons is review, not fail: at 20, about three
        times a usual picking threshold, the weakest quaternaries (no NOE, long T1) fall
        below it (measured: at carbon SNR 20 a third of the synthetic samples lose two or
        more; common practice).
    impurity_review_mol_percent : float
        A recognised impurity at or above this rough mol % needs review.
    impurity_fail_mol_percent : float
        Impurities adding up to this mol % or more mean the sample is mostly not the
        compound: fail.
    solvent_hiding_ppm : float
        A missing carbon counts as possibly hidden under a solvent signal (review, not
        fail) only when its prediction lies this close (ppm, and within one sigma):
        3 ppm keeps, e.g., propyl acetate's OCH2 (~66 ppm) from hiding under CDCl3 (77.16).
    reference_offset_review_ppm : float
        A referencing correction larger than this (ppm) needs review: an axis off by more
        than 1 ppm suggests a wrong solvent or reference (issue 5 text).

    """

    contradiction_cost: float = 12.0
    candidate_cost: float = 1.0
    range_scale_ppm: float = 4.0
    prediction_sd_ppm: float = 2.5
    prediction_huber: float = 2.0
    vouched_range_factor: float = 0.1
    prediction_cap: float = 3.0
    missing_cost: float = 7.0
    missing_quaternary_cost: float = 5.0
    unassigned_cost: float = 4.0
    weak_snr: float = 10.0
    minor_signal_cost: float = 1.5
    overlap_cost: float = 2.5
    supported_overlap_cost: float = 1.0
    overlap_prediction_ppm: float = 2.0
    partner_cost: float = 0.3
    split_cost: float = 2.0
    split_window_ppm: float = 1.0
    coupling_mismatch_cost: float = 2.0
    coupling_unseen_cost: float = 0.5
    intensity_hint_cost: float = 0.3
    confident: float = 0.7
    low_confidence: float = 0.6
    outside_review_ppm: float = 3.0
    far_outside_ppm: float = 10.0
    prediction_review_sd: float = 4.0
    weak_extra_ratio: float = 0.3
    min_sample_snr: float = 10.0
    overlap_allowance_classes: int = 6
    implausible_overlap_sd: float = 3.0
    min_prediction_sd: float = 1.5
    drift_max_prediction_sd: float = 4.0
    drift_min_carbons: int = 4
    drift_significance: float = 3.0
    max_missing_quaternary: int = 1
    weak_quaternary_snr: float = 20.0
    impurity_review_mol_percent: float = 2.0
    impurity_fail_mol_percent: float = 50.0
    solvent_hiding_ppm: float = 3.0
    reference_offset_review_ppm: float = 1.0

    def __post_init__(self) -> None:
        for name, value in vars(self).items():
            if value < 0:
                raise UsageError(f"VerdictConfig.{name} must be non-negative, got {value}")
        if not 0 <= self.low_confidence <= 1 or not 0 <= self.confident <= 1:
            raise UsageError("confidence thresholds must lie in [0, 1]")
        if self.overlap_allowance_classes < 1:
            raise UsageError("overlap_allowance_classes must be at least 1")
