"""Sample TOML files: every shared sample loads; bad ones are refused with a clear line.

Outside references: the sample files under ../shared/data/spectra (written for the
cheminfo datasets, see LICENSES.md); InChIKeys computed by RDKit.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from conftest import SHARED

from verify.errors import InputFileError, SampleError
from verify.model import EXPERIMENTS
from verify.sample import load_sample, same_compound

SAMPLES = sorted(
    p.relative_to(SHARED / "spectra").as_posix()
    for p in (SHARED / "spectra").glob("*/sample*.toml")
)

MOL_ETHANOL = """
     RDKit          2D

  3  2  0  0  0  0  0  0  0  0999 V2000
    0.0000    0.0000    0.0000 C   0  0
    1.2990    0.7500    0.0000 C   0  0
    2.5981   -0.0000    0.0000 O   0  0
  1  2  1  0
  2  3  1  0
M  END
"""


@pytest.mark.shared
@pytest.mark.parametrize("rel", SAMPLES)
def test_every_shared_sample_loads(rel: str) -> None:
    path = SHARED / "spectra" / rel
    if not path.exists():
        pytest.skip("shared data absent")
    text = path.read_text()
    sample = load_sample(path)
    assert sample.path == path.resolve()
    assert sample.name and sample.spectra
    for role, target in sample.spectra.items():
        assert role in EXPERIMENTS
        assert target.is_absolute() and target.exists()
        # each path is the TOML's value, relative to the TOML's folder
        assert f'{role} = "{target.relative_to(path.parent.resolve()).as_posix()}"' in text
    assert sample.structure_file is not None and sample.structure_file.is_file()
    assert sample.structure  # SMILES kept as written
    assert "source" in sample.metadata  # other top-level keys are metadata
    assert sample.solvent


def _write(tmp_path: Path, text: str, name: str = "s.toml") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def test_relative_paths_metadata_and_default_name(tmp_path: Path) -> None:
    (tmp_path / "data").mkdir()
    (tmp_path / "data" / "c.dx").write_text("##TITLE= x\n")
    (tmp_path / "eth.mol").write_text(MOL_ETHANOL)
    p = _write(
        tmp_path,
        'structure = "CCO"\nstructure_file = "eth.mol"\nlot = "L-17"\noperator = "R. Imre"\n'
        'temperature_k = 298\n[spectra]\ncarbon = "data/c.dx"\n',
        name="batch7.toml",
    )
    s = load_sample(p)
    assert s.name == "batch7"
    assert s.spectra["carbon"] == (tmp_path / "data" / "c.dx").resolve()
    assert s.structure_file == (tmp_path / "eth.mol").resolve()
    assert dict(s.metadata) == {"lot": "L-17", "operator": "R. Imre", "temperature_k": 298}
    assert s.solvent is None


def test_invalid_toml_names_line(tmp_path: Path) -> None:
    p = _write(tmp_path, 'name = "x"\nsolvent = CDCl3\n[spectra]\ncarbon = "a.dx"\n')
    with pytest.raises(SampleError, match=r"invalid TOML.*s\.toml, line 2"):
        load_sample(p)


def test_unknown_role_is_named(tmp_path: Path) -> None:
    (tmp_path / "a.dx").write_text("x")
    p = _write(tmp_path, '[spectra]\ncarbon = "a.dx"\nhsqc = "a.dx"\n')
    with pytest.raises(SampleError, match=r"unknown spectrum role 'hsqc'.*dept135.*s\.toml"):
        load_sample(p)


def test_missing_files(tmp_path: Path) -> None:
    with pytest.raises(InputFileError, match=r"no such sample file.*nothere\.toml"):
        load_sample(tmp_path / "nothere.toml")
    p = _write(tmp_path, '[spectra]\ncarbon = "gone.dx"\n')
    with pytest.raises(InputFileError, match=r"spectra\.carbon = 'gone\.dx' does not exist.*gone"):
        load_sample(p)
    (tmp_path / "a.dx").write_text("x")
    p = _write(tmp_path, 'structure_file = "x.mol"\n[spectra]\ncarbon = "a.dx"\n')
    with pytest.raises(InputFileError, match=r"structure_file 'x\.mol' does not exist"):
        load_sample(p)


def test_spectra_table_required_and_typed(tmp_path: Path) -> None:
    with pytest.raises(SampleError, match=r"no \[spectra\] table"):
        load_sample(_write(tmp_path, 'name = "x"\n'))
    with pytest.raises(SampleError, match=r"at least one role"):
        load_sample(_write(tmp_path, "[spectra]\n"))
    with pytest.raises(SampleError, match=r"spectra\.carbon should be a file name"):
        load_sample(_write(tmp_path, "[spectra]\ncarbon = 3\n"))
    with pytest.raises(SampleError, match=r"name should be a string"):
        load_sample(_write(tmp_path, 'name = 5\n[spectra]\ncarbon = "a.dx"\n'))


def test_structure_and_file_must_agree(tmp_path: Path) -> None:
    (tmp_path / "a.dx").write_text("x")
    (tmp_path / "eth.mol").write_text(MOL_ETHANOL)
    p = _write(
        tmp_path, 'structure = "COC"\nstructure_file = "eth.mol"\n[spectra]\ncarbon = "a.dx"\n'
    )
    with pytest.raises(SampleError, match=r"not the same compound: different compounds.*s\.toml"):
        load_sample(p)
    # same compound written differently (RDKit InChIKey LFQSCWFLJHTTHZ-UHFFFAOYSA-N)
    p = _write(
        tmp_path, 'structure = "OCC"\nstructure_file = "eth.mol"\n[spectra]\ncarbon = "a.dx"\n'
    )
    assert load_sample(p).structure == "OCC"


def test_stereo_rules(tmp_path: Path) -> None:
    mol = tmp_path / "crot.mol"
    from rdkit import Chem
    from rdkit.Chem import AllChem

    m = Chem.MolFromSmiles("C/C=C/C(=O)OCC")  # (E)-ethyl crotonate
    AllChem.Compute2DCoords(m)
    mol.write_text(Chem.MolToMolBlock(m))
    assert same_compound("C/C=C/C(=O)OCC", mol)[0]
    same, why = same_compound("C/C=C\\C(=O)OCC", mol)  # (Z) isomer
    assert not same and "different stereochemistry" in why
    # a SMILES without stereo is compatible with a file that has it (less specific)
    assert same_compound("CC=CC(=O)OCC", mol)[0]


def test_invalid_smiles_beside_a_file(tmp_path: Path) -> None:
    (tmp_path / "a.dx").write_text("x")
    (tmp_path / "eth.mol").write_text(MOL_ETHANOL)
    p = _write(
        tmp_path, 'structure = "C1CC("\nstructure_file = "eth.mol"\n[spectra]\ncarbon = "a.dx"\n'
    )
    with pytest.raises(SampleError, match=r"'C1CC\(' is not a valid SMILES.*s\.toml"):
        load_sample(p)
