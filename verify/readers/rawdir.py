"""Read a spectrometer raw-data folder (``acqus`` + ``fid``, optional ``pdata/N``).

The binary FID and the JCAMP-style parameter files are read with
:func:`nmrglue.bruker.read` (byte order ``BYTORDA``, integer or float ``DTYPA``), the
processed real spectrum ``pdata/N/1r`` with :func:`nmrglue.bruker.read_pdata`
(scaled by ``2**NC_proc``).  The FID is returned as acquired: its digital-filter
group delay (``GRPDLY`` when set, else nmrglue's DSP table for ``DECIM``/``DSPFVS``)
is stored in complex points in :attr:`Fid.group_delay` and removed in processing
(:mod:`verify.process`), which loses no point.  The carrier is
``(SFO1 − SF)/SF`` ppm with ``SF`` from ``pdata/1/procs`` when present, else
``BF1``.  With numpy's FFT sign a line above the carrier then lands at a higher
ppm — checked on the shared JCAMP FIDs, whose FFT peaks fall within 0.003 ppm of
the instrument's processed spectra.

References
----------
J. J. Helmus, C. P. Jaroniec, *J. Biomol. NMR* 2013, 55, 355 (nmrglue).  W. M.
Westler, F. Abildgaard, Bruker user note on DMX digital filters (1996), the table in
``nmrglue.fileio.bruker.bruker_dsp_table``.  Bruker ``OFFSET``/``SW_p``/``SI``/``SF``
axis parameters: common practice (TopSpin parameter documentation).

"""

from __future__ import annotations

import os
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from verify.errors import CtallyWarning, InputFileError, SpectrumFormatError
from verify.model import Fid, Spectrum
from verify.readers._common import (
    experiment_from_pulse_program,
    group_delay_points,
    normalise_nucleus,
)

__all__ = ["is_rawdir", "read_rawdir"]

_FID_NAMES = ("fid", "ser")


def is_rawdir(path: Path) -> bool:
    """Tell whether `path` is an experiment folder (``acqus`` beside ``fid`` or ``ser``)."""
    return (
        path.is_dir()
        and (path / "acqus").is_file()
        and any((path / n).is_file() for n in _FID_NAMES)
    )


def _param(dic: dict[str, Any], key: str) -> Any:
    v = dic.get(key)
    if isinstance(v, str):
        v = v.strip().strip("<>").strip()
        return v or None
    return v


def _float(dic: dict[str, Any], key: str) -> float | None:
    v = dic.get(key)
    try:
        return None if v is None else float(v)
    except (TypeError, ValueError):
        return None


def _nmrglue(func: Any, folder: Path, what: str, **kwargs: Any) -> Any:
    """Call an nmrglue reader on `folder`, turning its failures into one clear error."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return func(str(folder), **kwargs)
    except Exception as exc:  # nmrglue raises bare exceptions on corrupt files
        raise SpectrumFormatError(f"cannot read the {what}: {exc}", path=folder) from None


def _procs(folder: Path, procno: int) -> dict[str, Any] | None:
    import nmrglue as ng

    procs = folder / "pdata" / str(procno) / "procs"
    if not procs.is_file():
        return None
    try:
        return dict(ng.bruker.read_jcamp(str(procs)))
    except Exception as exc:  # nmrglue raises bare exceptions on bad parameter files
        raise SpectrumFormatError(f"cannot read {procs.name}: {exc}", path=procs) from None


def read_rawdir(
    path: str | os.PathLike[str], *, processed: bool = False, procno: int = 1
) -> Fid | Spectrum:
    """Read a raw-data experiment folder.

    Parameters
    ----------
    path : str or path-like
        The experiment folder (holding ``acqus`` and ``fid``).
    processed : bool
        Read ``pdata/<procno>/1r`` as a :class:`Spectrum` instead of the FID.
    procno : int
        Processing number for ``processed`` (and for ``SF``).

    Returns
    -------
    Fid or Spectrum
        The complex FID as acquired (dwell in s, observe frequency SFO1 in MHz,
        carrier in ppm, group delay in complex points), or the processed real
        spectrum on its ppm axis ``OFFSET − i·SW_p/(SF·SI)``.

    Raises
    ------
    InputFileError
        Missing folder, ``acqus`` or ``fid``.
    SpectrumFormatError
        A 2D data set, an unreadable or truncated binary file.

    References
    ----------
    See the module docstring.

    """
    import nmrglue as ng

    folder = Path(path)
    if not folder.is_dir():
        raise InputFileError(f"no such raw-data folder: {folder}", path=folder)
    if not (folder / "acqus").is_file():
        raise InputFileError("the folder holds no acqus parameter file", path=folder)
    if processed:
        return _read_processed(folder, procno)
    fidfile = next((folder / n for n in _FID_NAMES if (folder / n).is_file()), None)
    if fidfile is None:
        raise InputFileError("the folder holds no fid file", path=folder)
    if fidfile.stat().st_size == 0:
        raise InputFileError("the fid file is empty", path=fidfile)
    if (folder / "acqu2s").is_file() or fidfile.name == "ser":
        raise SpectrumFormatError("this is a 2D data set; ctally reads 1D data only", path=folder)
    dic, data = _nmrglue(ng.bruker.read, folder, "raw data", read_pulseprogram=False)
    acq = dic["acqus"]
    td = _float(acq, "TD")
    data = np.asarray(data)
    if data.ndim != 1:
        raise SpectrumFormatError("this is a 2D data set; ctally reads 1D data only", path=folder)
    if td is not None and data.size * 2 < td:
        raise SpectrumFormatError(
            f"acqus says TD = {int(td)} points but the fid holds {2 * data.size}; the file"
            " is truncated",
            path=fidfile,
        )
    sw = _float(acq, "SW_h")
    sfo1 = _float(acq, "SFO1")
    bf1 = _float(acq, "BF1")
    if not sw or not sfo1:
        raise SpectrumFormatError("acqus gives no SW_h or SFO1", path=folder / "acqus")
    procs = _procs(folder, procno)
    sf = _float(procs, "SF") if procs else None
    sf = sf or bf1 or sfo1
    decim, dspfvs, grpdly = _float(acq, "DECIM"), _float(acq, "DSPFVS"), _float(acq, "GRPDLY")
    gd, gd_src = group_delay_points(decim, dspfvs, grpdly, _float(acq, "DIGMOD"))
    pulse = _param(acq, "PULPROG")
    prov: dict[str, Any] = {
        "format": "raw folder",
        "DECIM": decim,
        "DSPFVS": dspfvs,
        "GRPDLY": grpdly,
        "group_delay_source": gd_src,
        "TD": td,
        "SW_h": sw,
        "SFO1": sfo1,
        "BF1": bf1,
        "SF": sf,
        "carrier": "(SFO1 - SF) / SF",
        "BYTORDA": _float(acq, "BYTORDA"),
        "DTYPA": _float(acq, "DTYPA"),
        "NS": _float(acq, "NS"),
    }
    if procs:
        for key in ("LB", "PHC0", "PHC1", "SI", "OFFSET", "SW_p", "WDW", "GB", "SR"):
            prov[key] = _float(procs, key)
    nucleus = normalise_nucleus(_param(acq, "NUC1"))
    try:
        return Fid(
            data=data.astype(np.complex128),
            dwell_s=1.0 / sw,
            observe_mhz=sfo1,
            carrier_ppm=(sfo1 - sf) * 1e6 / sf,
            group_delay=gd,
            nucleus=nucleus,
            experiment=experiment_from_pulse_program(pulse),
            solvent=_param(acq, "SOLVENT"),
            source=folder,
            provenance=prov,
            pulse_program=pulse,
        )
    except ValueError as exc:
        raise SpectrumFormatError(f"the FID is unusable: {exc}", path=fidfile) from None


def _read_processed(folder: Path, procno: int) -> Spectrum:
    import nmrglue as ng

    pdata = folder / "pdata" / str(procno)
    if not (pdata / "1r").is_file():
        raise InputFileError(f"no processed spectrum pdata/{procno}/1r", path=folder)
    dic, data = _nmrglue(ng.bruker.read_pdata, pdata, "processed data", all_components=False)
    procs = dic["procs"]
    acq = dic.get("acqus", {})
    data = np.asarray(data, dtype=np.float64)
    if data.ndim != 1:
        raise SpectrumFormatError("this is a 2D spectrum; ctally reads 1D data only", path=pdata)
    si = data.size
    offset, sw_p, sf = _float(procs, "OFFSET"), _float(procs, "SW_p"), _float(procs, "SF")
    if offset is None or not sw_p or not sf:
        raise SpectrumFormatError("procs gives no OFFSET, SW_p or SF", path=pdata / "procs")
    if _float(procs, "SI") not in (None, si):
        warnings.warn(
            f"procs SI = {procs.get('SI')} but 1r holds {si} points", CtallyWarning, stacklevel=3
        )
    ppm = np.asarray(offset - np.arange(si) * sw_p / (sf * si), dtype=np.float64)
    pulse = _param(acq, "PULPROG")
    prov = {
        "format": "raw folder, processed",
        "procno": procno,
        "OFFSET": offset,
        "SW_p": sw_p,
        "SF": sf,
        "SI": si,
        "NC_proc": _float(procs, "NC_proc"),
        "LB": _float(procs, "LB"),
        "PHC0": _float(procs, "PHC0"),
        "PHC1": _float(procs, "PHC1"),
        "axis": "OFFSET - i * SW_p / (SF * SI)",
    }
    return Spectrum(
        ppm=ppm,
        intensity=data,
        nucleus=normalise_nucleus(_param(acq, "NUC1") or _param(procs, "AXNUC")),
        observe_mhz=sf,
        experiment=experiment_from_pulse_program(pulse),
        solvent=_param(acq, "SOLVENT"),
        source=pdata,
        provenance=prov,
        pulse_program=pulse,
    )
