"""Reference the ppm axis of a sample on its solvent (or TMS) and align its experiments.

The solvent's carbon multiplet (e.g. the 1:1:1 triplet of CDCl3 at 77.16 ppm) is
found in the broadband carbon spectrum (or, without one, the APT) by its *shape*:
the number of lines, their spacing in Hz (the one-bond C–D coupling) and their
intensity pattern — not by the tallest line near the expected shift, which may
be a sample carbon.  Lines of either sign are accepted, so an inverted or slightly
mis-phased spectrum is referenced too.  An offset up to ``tolerance_ppm`` is
corrected; a larger one is reported and left alone (a mis-assigned solvent is
likelier than a 3 ppm referencing error).

The same offset is applied to every experiment of the sample.  Edited spectra
(DEPT) show no solvent line; when their own file axis disagrees with the carbon
spectrum's (many peaks agree on one shift), they are moved onto it as well.

References
----------
G. R. Fulmer et al., Organometallics 2010, 29, 2176 (solvent shifts and
multiplicities, in ``verify/data/solvents.toml``).  R. K. Harris et al., Pure Appl.
Chem. 2001, 73, 1795 (TMS as the primary 13C reference; the unified scale).

"""

from __future__ import annotations

import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, replace
from functools import cache
from importlib import resources
from typing import Any

import numpy as np

from verify._lines import (
    binomial_pattern,
    find_lines,
    find_multiplet,
    robust_noise,
    smooth_baseline,
)
from verify.model import Referencing, Spectrum

__all__ = ["SolventSignal", "canonical_solvent", "reference_sample", "solvent_signals"]

#: Experiments that show the solvent's deuterated carbon (no attached protium).
_SOLVENT_VISIBLE = ("carbon", "apt")
#: Largest shift (ppm) between an edited spectrum's file axis and the carbon's that is
#: looked for, and the agreement (ppm) that counts two peaks as the same carbon.
_ALIGN_MATCH_PPM = 0.03
#: A solvent multiplet with one line buried under a sample line is accepted only this
#: close (ppm) to its published shift: the weaker evidence needs the stronger prior.
_OVERLAP_PPM = 0.5


@dataclass(frozen=True)
class SolventSignal:
    """One carbon signal of a solvent.

    Attributes
    ----------
    ppm : float
        Published shift in ppm.
    deuterium : int
        Equivalent ²H on that carbon (0: splitting unresolved, a singlet).
    j_hz : float
        One-bond C–D coupling in Hz.
    primary : bool
        Used to reference the axis (else only to confirm/label).
    pattern : tuple of float
        Relative line intensities.

    """

    ppm: float
    deuterium: int
    j_hz: float
    primary: bool

    @property
    def pattern(self) -> tuple[float, ...]:
        """Relative line intensities (1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1 or a singlet)."""
        return binomial_pattern(self.deuterium, spin2=True)


@cache
def _table() -> dict[str, dict[str, Any]]:
    text = resources.files("verify").joinpath("data/solvents.toml").read_text("utf-8")
    return tomllib.loads(text)


def _norm(name: str) -> str:
    return re.sub(r"\s+", " ", name.strip().lower())


@cache
def _aliases() -> dict[str, str]:
    out: dict[str, str] = {}
    for key, entry in _table().items():
        out[_norm(key)] = key
        out[_norm(key).replace(" ", "")] = key
        for alias in entry.get("names", []):
            out[_norm(alias)] = key
            out[_norm(alias).replace(" ", "")] = key
    return out


def canonical_solvent(name: str | None) -> str | None:
    """Canonical key of a solvent name as files and users write it.

    Parameters
    ----------
    name : str or None
        E.g. ``"CDCl3"``, ``"Chloroform-D1 (CDCl3)"``, ``"DMSO"``, ``"acetone-d6"``,
        ``"Methanol-D4 (CD3OD)"``.

    Returns
    -------
    str or None
        One of the keys of ``verify/data/solvents.toml`` (``"CDCl3"``, ``"DMSO-d6"``,
        ``"CD3OD"``, ``"acetone-d6"``, ``"C6D6"``, ``"CD2Cl2"``, ``"CD3CN"``,
        ``"THF-d8"``, ``"pyridine-d5"``, ``"D2O"``, ``"TMS"``), or None when the name
        is empty or unknown.

    """
    if name is None or not name.strip():
        return None
    aliases = _aliases()
    text = _norm(name)
    tries = [text, text.replace(" ", "")]
    # "Chloroform-D1 (CDCl3)": try the parenthesised part and the rest separately
    tries += [_norm(m) for m in re.findall(r"\(([^()]*)\)", text)]
    tries.append(_norm(re.sub(r"\([^()]*\)", "", text)))
    # "Dimethylsulphoxide-D6 (DMSO-D6, C2D6SO))": every comma- or bracket-separated part
    tries += [_norm(t) for t in re.split(r"[(),;]", text) if t.strip()]
    for t in list(tries):
        tries.append(re.sub(r"[-_ ]?d\d*$", "", t))  # "acetone-d6" → "acetone"
        tries.append(t.replace("_", "-"))
    for t in tries:
        if t and t in aliases:
            return aliases[t]
        if t and t.replace(" ", "") in aliases:
            return aliases[t.replace(" ", "")]
    return None


def solvent_signals(name: str | None) -> tuple[SolventSignal, ...]:
    """Carbon signals of a solvent (empty for D2O or an unknown name).

    Parameters
    ----------
    name : str or None
        Any spelling :func:`canonical_solvent` understands.

    Returns
    -------
    tuple of SolventSignal
        Primary (referencing) signals first.

    """
    key = canonical_solvent(name)
    if key is None:
        return ()
    sigs = [
        SolventSignal(
            float(s["ppm"]), int(s["deuterium"]), float(s["j_hz"]), bool(s.get("primary"))
        )
        for s in _table()[key].get("signals", [])
    ]
    return tuple(sorted(sigs, key=lambda s: not s.primary))


def find_solvent(
    spectrum: Spectrum, signal: SolventSignal, window_ppm: float
) -> tuple[float, tuple[float, ...], float, float] | None:
    """Locate a solvent multiplet by its shape within ``window_ppm`` of its shift.

    Parameters
    ----------
    spectrum : Spectrum
        Carbon (or APT) spectrum on its file axis, baseline-flat (see
        :func:`verify._lines.smooth_baseline`).
    signal : SolventSignal
        What to look for.
    window_ppm : float
        Largest distance (ppm) of the multiplet centre from ``signal.ppm``.

    Returns
    -------
    (centre_ppm, lines_ppm, j_hz, misfit) or None
        ``j_hz`` the fitted spacing, ``misfit`` the relative height misfit.

    """
    sigma = robust_noise(spectrum.intensity)
    if sigma <= 0:
        return None
    if signal.deuterium == 0:
        # a singlet cannot be told by shape: TMS only, strong and alone near 0 ppm
        match = find_multiplet(
            spectrum.ppm, spectrum.intensity, sigma, spectrum.observe_mhz, signal.ppm,
            window_ppm, 0.0, (1.0,), min_snr=10.0,
        )  # fmt: skip
        return None if match is None else (match.centre_ppm, match.lines_ppm, 0.0, 0.0)
    match = find_multiplet(
        spectrum.ppm,
        spectrum.intensity,
        sigma,
        spectrum.observe_mhz,
        signal.ppm,
        window_ppm,
        signal.j_hz,
        signal.pattern,
        overlap_ppm=_OVERLAP_PPM,
    )
    if match is None:
        return None
    return match.centre_ppm, match.lines_ppm, match.j_hz, match.misfit


def _shifted(spectrum: Spectrum, offset: float, extra: Mapping[str, Any]) -> Spectrum:
    prov = dict(spectrum.provenance)
    prov["referencing"] = dict(extra)
    return replace(spectrum, ppm=spectrum.ppm + offset, provenance=prov)


def _peak_positions(spectrum: Spectrum, snr: float = 8.0) -> np.ndarray:
    y = spectrum.intensity
    sigma = robust_noise(y)
    if sigma <= 0:
        return np.empty(0)
    lines = find_lines(y, snr * sigma, min_prominence=snr * sigma)
    lines += find_lines(y, snr * sigma, min_prominence=snr * sigma, sign=-1)
    idx = np.array([ln.pos for ln in lines])
    if idx.size == 0:
        return np.empty(0)
    return np.asarray(np.interp(idx, np.arange(y.size), spectrum.ppm), dtype=np.float64)


def _axis_disagreement(edited: Spectrum, carbon: Spectrum, limit_ppm: float) -> float | None:
    """Shift (ppm) to add to ``edited`` so its peaks sit on the carbon's, or None.

    Every pairwise difference within ``limit_ppm`` is a candidate; the one that
    brings the most edited peaks within 0.03 ppm of a carbon peak wins, refined as
    the median of those matches.  Returned only when at least 3 peaks and half of
    the edited peaks agree, and more agree than at no shift.
    """
    pe, pc = _peak_positions(edited), _peak_positions(carbon)
    if pe.size < 3 or pc.size < 3:
        return None
    diffs = (pc[None, :] - pe[:, None]).ravel()
    diffs = diffs[np.abs(diffs) <= limit_ppm]
    if diffs.size == 0:
        return None

    def support(d: float) -> tuple[int, np.ndarray]:
        near = np.abs(pc[None, :] - (pe[:, None] + d))
        j = np.argmin(near, axis=1)
        ok = near[np.arange(pe.size), j] <= _ALIGN_MATCH_PPM
        return int(ok.sum()), (pc[j] - pe)[ok]

    best_d, best_n = 0.0, -1
    for d in np.unique(np.round(diffs, 4)):
        n, _ = support(float(d))
        if n > best_n or (n == best_n and abs(d) < abs(best_d)):
            best_d, best_n = float(d), n
    n0, _ = support(0.0)
    n, matched = support(best_d)
    if n < max(3, (pe.size + 1) // 2) or n <= n0:
        return None
    return float(np.median(matched))


def reference_sample(
    spectra: Mapping[str, Spectrum], solvent: str | None, *, tolerance_ppm: float = 2.0
) -> tuple[dict[str, Spectrum], Referencing]:
    """Put every spectrum of a sample on one corrected ppm axis.

    Parameters
    ----------
    spectra : mapping of str to Spectrum
        Experiment role (``"carbon"``, ``"dept135"`` …) → processed spectrum.
    solvent : str or None
        Solvent as the user or file wrote it (see :func:`canonical_solvent`).
    tolerance_ppm : float
        Largest referencing error (ppm) that is corrected.

    Returns
    -------
    spectra : dict of str to Spectrum
        New spectra (same roles and order) with shifted ppm axes; each carries
        ``provenance["referencing"] = {"offset_ppm", "method", "alignment_ppm"}``.
    referencing : Referencing
        The common correction (corrected = file + ``offset_ppm``), how it was found,
        and a note for the report.

    References
    ----------
    See the module docstring.

    """
    key = canonical_solvent(solvent)
    ref_role = next((r for r in _SOLVENT_VISIBLE if r in spectra), None)
    if ref_role is None and spectra:
        ref_role = next(iter(spectra))
    ref_spec = spectra.get(ref_role) if ref_role else None

    if ref_spec is not None and ref_role not in _SOLVENT_VISIBLE:
        # edited spectra show no deuterated carbon: only TMS (a CH3) could be seen
        referencing = _find_reference(ref_spec, None, None, tolerance_ppm)
        referencing = replace(
            referencing,
            solvent=key,
            note=(
                f"No carbon or APT spectrum, so no solvent line to reference on ({ref_role}"
                " shows no deuterated carbon); " + referencing.note.split("; ", 1)[-1]
            ),
        )
    else:
        referencing = _find_reference(ref_spec, solvent, key, tolerance_ppm)
    offset = referencing.offset_ppm
    out: dict[str, Spectrum] = {}
    for role, spec in spectra.items():
        extra = 0.0
        if ref_spec is not None and role != ref_role:
            moved = _axis_disagreement(spec, ref_spec, tolerance_ppm)
            if moved is not None and abs(moved) > max(0.01, 0.5 * spec.ppm_per_point):
                extra = moved
        out[role] = _shifted(
            spec,
            offset + extra,
            {"offset_ppm": offset + extra, "method": referencing.method, "alignment_ppm": extra},
        )
        if extra:
            referencing = replace(
                referencing,
                note=(
                    referencing.note
                    + f" The {role} axis disagreed with the {ref_role} spectrum's by"
                    f" {extra:+.3f} ppm (matched peaks) and was moved onto it."
                ).strip(),
            )
    return out, referencing


def _other_solvent(spec: Spectrum, stated: str | None, tol: float) -> Referencing | None:
    """Find the one other table solvent whose multiplet the spectrum shows, if exactly one."""
    hits = []
    for other in _table():
        if other in (stated, "TMS", "D2O"):
            continue
        for sig in solvent_signals(other):
            if not sig.primary or sig.deuterium == 0:
                continue
            found = find_solvent(spec, sig, tol)
            # a 1:1:1 triplet is easily mimicked by three sample lines: stricter fit
            limit = 0.1 if len(sig.pattern) == 3 else 0.25
            if found is not None and found[3] < limit and len(found[1]) >= 3:
                hits.append((other, sig, found))
    if len(hits) != 1:
        return None
    other, sig, (centre, lines, j, _misfit) = hits[0]
    offset = sig.ppm - centre
    return Referencing(
        offset_ppm=offset,
        method="solvent",
        solvent=other,
        reference_ppm=sig.ppm,
        found_ppm=centre,
        note=(
            f"the spectrum shows the {len(lines)}-line multiplet of {other} instead"
            f" (J(C,D) {j:.1f} Hz) at {centre:.3f} ppm, set to {sig.ppm:.2f} ppm:"
            f" offset {offset:+.3f} ppm. Check the solvent named for the sample."
        ),
    )


def _find_reference(
    spec: Spectrum | None, solvent: str | None, key: str | None, tol: float
) -> Referencing:
    if spec is None:
        return Referencing(method="none", solvent=key, note="No spectrum to reference.")
    if robust_noise(spec.intensity) > 0:
        spec = replace(spec, intensity=spec.intensity - smooth_baseline(spec.intensity))
    if key is None and solvent:
        note = f"Solvent {solvent!r} is not in the solvent table; "
    elif key is None:
        note = "No solvent given; "
    elif key == "D2O":
        note = "D2O has no carbon signal; "
    else:
        note = ""
    primary = [s for s in solvent_signals(key) if s.primary and s.deuterium > 0]
    for sig in primary:
        found = find_solvent(spec, sig, tol)
        if found is not None:
            centre, lines, j, misfit = found
            offset = sig.ppm - centre
            return Referencing(
                offset_ppm=offset,
                method="solvent",
                solvent=key,
                reference_ppm=sig.ppm,
                found_ppm=centre,
                note=(
                    f"{key} {len(lines)}-line multiplet (J(C,D) {j:.1f} Hz) found at"
                    f" {centre:.3f} ppm and set to {sig.ppm:.2f} ppm: offset {offset:+.3f} ppm."
                ),
            )
        far = find_solvent(spec, sig, max(3.0 * tol, tol + 3.0))
        if far is not None and abs(far[0] - sig.ppm) > tol:
            return Referencing(
                offset_ppm=0.0,
                method="file",
                solvent=key,
                reference_ppm=sig.ppm,
                found_ppm=far[0],
                note=(
                    f"A {key}-like multiplet lies at {far[0]:.3f} ppm, {far[0] - sig.ppm:+.2f}"
                    f" ppm from its published {sig.ppm:.2f} ppm — beyond the ±{tol:g} ppm"
                    " that is corrected; the axis is kept as written. Check the solvent"
                    " and the referencing."
                ),
            )
        note = f"The {key} multiplet near {sig.ppm:.2f} ppm was not found; "
    other = _other_solvent(spec, key, tol) if key != "D2O" else None
    if other is not None:
        return replace(other, note=note + other.note)
    tms = solvent_signals("TMS")[0]
    sigma = robust_noise(spec.intensity)
    found_tms = (
        find_multiplet(
            spec.ppm,
            spec.intensity,
            sigma,
            spec.observe_mhz,
            0.0,
            min(tol, 0.5),
            0.0,
            (1.0,),
            min_snr=10.0,
        )  # fmt: skip
        if sigma > 0 and spec.ppm.min() < 0.0 < spec.ppm.max()
        else None
    )
    if found_tms is not None:
        offset = tms.ppm - found_tms.centre_ppm
        return Referencing(
            offset_ppm=offset,
            method="tms",
            solvent=key,
            reference_ppm=0.0,
            found_ppm=found_tms.centre_ppm,
            note=note + f"TMS line found at {found_tms.centre_ppm:.3f} ppm and set to 0.",
        )
    return Referencing(
        offset_ppm=0.0,
        method="file",
        solvent=key,
        note=note + "no reference signal found; the axis is kept as written in the file.",
    )
