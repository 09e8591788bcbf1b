"""Verdicts built by hand for the report tests (no pipeline stage is run).

The compound is 4'-methoxyacetophenone in CDCl3.  Shifts (ppm) are typical values
for it, from memory (close to the usual spectral-database entries): C=O 196.8,
C-OMe 163.5, CH (ortho to C=O) 130.6, ipso C 130.3, CH (ortho to OMe) 113.7,
OCH3 55.5, COCH3 26.3.  Carbon classes come from RDKit's symmetry ranks, not from
the project's structure stage.  Spectra are Lorentzian lines on a seeded noise
floor, with DEPT signs as the textbook rules give them (common practice):
DEPT-90 shows CH only; DEPT-135 shows CH and CH3 up, CH2 down; quaternary carbons
are absent from both.  The CDCl3 triplet is centred at 77.16 ppm (Fulmer et al.,
Organometallics 2010, 29, 2176) with 1J(C,D) ≈ 32 Hz (from memory).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from rdkit import Chem
from rdkit.Chem import rdDepictor

from verify.model import (
    Assignment,
    CarbonClass,
    Expectation,
    Finding,
    Impurity,
    Observation,
    PeakSet,
    Referencing,
    Sample,
    Signal,
    Spectrum,
    Verdict,
)

SMILES = "COc1ccc(C(C)=O)cc1"
MHZ = 100.6
#: atom index (0-based, in SMILES order) → shift (ppm) for one member of each class
SHIFTS = {0: 55.5, 2: 163.5, 3: 113.7, 4: 130.6, 5: 130.3, 6: 196.8, 7: 26.3}
SOLVENT = (77.16 + 0.318, 77.16, 77.16 - 0.318)  # CDCl3 triplet lines, 32 Hz at 100.6 MHz
SIGN135 = {"C": 0.0, "CH": 1.0, "CH2": -1.0, "CH3": 1.0}
SIGN90 = {"C": 0.0, "CH": 1.0, "CH2": 0.0, "CH3": 0.0}


def lorentzian(ppm: np.ndarray, centre: float, height: float, width_hz: float = 1.6) -> np.ndarray:
    hw = width_hz / MHZ / 2.0
    return height * hw**2 / ((ppm - centre) ** 2 + hw**2)


def spectrum(lines: Sequence[tuple[float, float]], role: str, seed: int = 7) -> Spectrum:
    """Spectrum of Lorentzian `lines` (ppm, height) on 32768 points, 230 → −10 ppm."""
    ppm = np.linspace(230.0, -10.0, 32768)
    rng = np.random.default_rng(seed)
    y = rng.normal(0.0, 0.004, ppm.size)
    for centre, height in lines:
        y += lorentzian(ppm, centre, height)
    return Spectrum(
        ppm=ppm,
        intensity=y,
        observe_mhz=MHZ,
        experiment=role,
        solvent="CDCl3",
        provenance={"format": "synthetic", "apodization": "none", "zero_fill": 1},
    )


def classes(mol: Chem.Mol) -> tuple[CarbonClass, ...]:
    ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False))
    groups: dict[int, list[int]] = {}
    for atom in mol.GetAtoms():
        if atom.GetAtomicNum() == 6:
            groups.setdefault(ranks[atom.GetIdx()], []).append(atom.GetIdx())
    out = []
    for members in sorted(groups.values()):
        h = mol.GetAtomWithIdx(members[0]).GetTotalNumHs()
        mult = ("C", "CH", "CH2", "CH3")[h]
        shift = SHIFTS[members[0]]
        out.append(
            CarbonClass(
                atoms=tuple(members),
                multiplicity=mult,  # type: ignore[arg-type]
                environment="aromatic" if mol.GetAtomWithIdx(members[0]).GetIsAromatic() else "sp3",
                shift_range=(shift - 10, shift + 10),
                predicted_ppm=shift + 0.8,
            )
        )
    return tuple(out)


def make_verdict(
    *,
    verdict: str = "pass",
    findings: Sequence[Finding] = (),
    impurity: Mapping[str, float] | None = None,
    name: str = "",
    structure: str = SMILES,
    solvent_label: str = "CDCl3",
    score: float = 0.9,
    impurity_as_sample: bool = False,
    solvent_lines: bool = False,
) -> Verdict:
    """A full hand-made Verdict with carbon, DEPT-90 and DEPT-135 spectra.

    `impurity` maps an impurity name to one extra signal shift (ppm) to add.  With
    `impurity_as_sample` those signals keep the classify stage's role "sample" (with
    a CH2 call) and only the verdict's Impurity record explains them.
    """
    mol = Chem.MolFromSmiles(SMILES)
    cls = classes(mol)
    rdDepictor.Compute2DCoords(mol)
    exp = Expectation(
        structure=structure,
        formula="C9H10O2",
        classes=cls,
        molblock=Chem.MolToMolBlock(mol),
        name=name or structure,
    )
    carbon_lines, l90, l135 = [], [], []
    signals = []
    for c in cls:
        shift = SHIFTS[c.atoms[0]]
        height = (0.35 if c.multiplicity == "C" else 1.0) * c.carbons
        carbon_lines.append((shift, height))
        l90.append((shift, SIGN90[c.multiplicity] * height))
        l135.append((shift, SIGN135[c.multiplicity] * height))
        signals.append(
            Signal(
                ppm=shift,
                multiplicity=c.multiplicity,
                confidence=0.95,
                reason="edited-spectrum signs",
                carbons=c.carbons,
                height=height,
                snr=200.0,
            )
        )
    for line in SOLVENT:
        carbon_lines.append((line, 1.2))
    for line in SOLVENT if solvent_lines else (77.16,):  # each line its own signal, or one
        signals.append(
            Signal(ppm=line, multiplicity=None, confidence=1.0, role="solvent", label=solvent_label)
        )
    for imp_name, shift in (impurity or {}).items():
        carbon_lines.append((shift, 0.08))
        if impurity_as_sample:
            signals.append(Signal(ppm=shift, multiplicity="CH2", confidence=0.9, label=imp_name))
        else:
            signals.append(
                Signal(
                    ppm=shift, multiplicity=None, confidence=0.5, role="impurity", label=imp_name
                )
            )
    spectra = {
        "carbon": spectrum(carbon_lines, "carbon", 1),
        "dept90": spectrum(l90, "dept90", 2),
        "dept135": spectrum(l135, "dept135", 3),
    }
    peaksets = {
        role: PeakSet(experiment=role, peaks=(), noise=0.004, spectrum=s, threshold_snr=5.0)
        for role, s in spectra.items()
    }
    obs = Observation(
        signals=tuple(signals),
        experiments=("carbon", "dept90", "dept135"),
        mode="full",
        referencing=Referencing(
            offset_ppm=0.02,
            method="solvent",
            solvent="CDCl3",
            reference_ppm=77.16,
            found_ppm=77.14,
            note="CDCl3 centre line set to 77.16 ppm",
        ),
        peaksets=peaksets,
    )
    # assignment by identical shift (the signals were made from the classes)
    assignment = []
    for ci, c in enumerate(cls):
        si = next(i for i, s in enumerate(obs.signals) if s.ppm == SHIFTS[c.atoms[0]])
        assignment.append(Assignment(signal=si, classes=(ci,), cost=0.1))
    impurities = tuple(
        Impurity(
            name=n,
            signals=tuple(i for i, s in enumerate(obs.signals) if s.label == n),
            mol_percent=1.5,
            source="Fulmer et al. 2010",
        )
        for n in (impurity or {})
    )
    return Verdict(
        verdict=verdict,
        expectation=exp,
        observation=obs,
        assignment=tuple(assignment),
        findings=tuple(findings),
        impurities=impurities,
        score=score,
    )


def make_sample(name: str = "KB-demo lot 7", **metadata: object) -> Sample:
    return Sample(
        name=name,
        structure=SMILES,
        structure_file=None,
        solvent="CDCl3",
        spectra={},
        metadata=metadata or {"lot": "L-0007", "operator": "R. Demo"},
    )
