"""Observation of a recorded shift list through synthetic spectra (simulate → pick → classify).

Used by bench_shiftset.py (``--spectra N``) and kept apart so that the benchmark runs when
those stages are absent.
"""

from __future__ import annotations

import collections
import warnings

from rdkit import Chem

from verify.errors import CtallyError, CtallyWarning
from verify.model import MULTIPLICITIES, Observation


def protium(atom: Chem.Atom) -> int:
    """Attached protium (deuterium not counted)."""
    explicit = sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1 and n.GetIsotope() != 2)
    return atom.GetTotalNumHs() + explicit


def observe_by_spectra(
    shifts: dict[int, float],
    mol: Chem.Mol,
    seed: int,
    *,
    experiments: tuple[str, ...] = ("carbon", "dept90", "dept135"),
    snr: float = 100.0,
    solvent: str = "CDCl3",
) -> Observation | None:
    """Synthesize, reference, pick and classify the recorded carbons of one molecule."""
    from verify.classify import classify
    from verify.peaks import pick_peaks
    from verify.reference import reference_sample
    from verify.simulate import SyntheticCarbon, synthesize

    groups: dict[tuple[float, str], int] = collections.Counter()
    for atom, ppm in shifts.items():
        mult = MULTIPLICITIES[min(3, protium(mol.GetAtomWithIdx(atom)))]
        groups[(ppm, mult)] += 1
    carbons = [SyntheticCarbon(ppm=p, multiplicity=m, carbons=n) for (p, m), n in groups.items()]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CtallyWarning)
        try:
            spectra = synthesize(
                carbons, experiments=experiments, snr=snr, seed=seed, solvent=solvent
            )
            spectra, ref = reference_sample(spectra, solvent)
            peaksets = {
                role: pick_peaks(sp, role, solvent=solvent, referencing=ref)
                for role, sp in spectra.items()
            }
            return classify(peaksets, referencing=ref, solvent=solvent)
        except CtallyError:
            return None
