"""Record rules that depend on the device kind: which fields a kind carries, what "n" and "p"
mean, the signs of FET threshold and cut-off voltages, and the FET windows (min <= max).

Called by :func:`partsdb.device.check_columns` (column-wise, for imports as for one record) and
:func:`partsdb.device.parse_device`; kept apart so ``device.py`` stays one table and its parser.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

from partsdb.device import (
    _KIND_WORDS,
    BIPOLAR_KINDS,
    FIELDS,
    POLARITY_WORDS,
    _present,
    _words,
)
from partsdb.units import format_quantity

if TYPE_CHECKING:
    import numpy as np


def check_kind_rules(columns: Mapping[str, Any], n: int, kinds: Any, fet: np.ndarray,
                     cols: Mapping[str, Any], flag: Any) -> None:
    """The rules that depend on the kind: which fields a kind carries, the polarity words, the
    signs of threshold and cut-off voltages, and the FET windows (min <= max)."""
    import numpy as np

    nan: Any = np.full(n, np.nan)
    for spec in FIELDS:
        if spec.kinds is None or spec.name not in columns or spec.name == "mode":
            continue
        if spec.name in cols:  # a number column: NaN is blank (no pass over the cells)
            present = ~np.isnan(cols[spec.name])
        elif spec.kind == "flag":
            present = np.array([v is not None for v in columns[spec.name]], dtype=bool)
        else:
            present = _present(columns[spec.name], n)
        if not present.any():
            continue
        wrong = present & ~np.isin(kinds, np.array(sorted(spec.kinds), dtype=object))
        flag(wrong, spec.name, lambda i, s=spec: (
            f"{s.name}: a {_KIND_WORDS[s.kinds]} field ({s.label}), not used on a "  # type: ignore[index]
            f"{kinds[i]} record; expected it blank"))
    modes: Any = _words(columns.get("mode"), n, None)
    mosfet = kinds == "mosfet"
    flag(~mosfet & (modes != None), "mode", lambda i: (  # noqa: E711
        f"mode: {modes[i]!r} is not used on a {kinds[i]} record"
        + ("; a JFET is always depletion-mode" if kinds[i] == "jfet" else "")
        + "; expected it blank"))
    pols: Any = _words(columns.get("polarity"), n, None)
    flag(fet & np.isin(pols, np.array(["npn", "pnp"], dtype=object)), "polarity", lambda i: (
        f"polarity: {pols[i]!r} is a bipolar polarity; expected n or p (the channel) "
        f"for a {kinds[i]}"))
    flag(fet & (_words(columns.get("material"), n, None) == "ge"), "material", lambda i: (
        f"material: 'ge' on a {kinds[i]}; expected si or other (there are no germanium FETs "
        "in this catalog's scope)"))
    # The sign of the threshold (MOSFET) and of the cut-off voltage (JFET, depletion MOSFET):
    # an N-channel enhancement MOSFET turns on with the gate positive, a depletion part is cut
    # off with the gate negative; P-channel the other way round (common practice).
    n_ch, p_ch = pols == "n", pols == "p"
    depletion = (kinds == "jfet") | (mosfet & (modes == "depletion"))
    enhancement = mosfet & ~depletion
    th_sign = np.where(mosfet & ((n_ch & enhancement) | (p_ch & depletion)), 1.0,
                       np.where(mosfet & ((p_ch & enhancement) | (n_ch & depletion)), -1.0,
                                np.nan))
    off_sign = np.where(depletion & n_ch, -1.0, np.where(depletion & p_ch, 1.0, np.nan))
    for names, sign, what in ((("vgs_th_min", "vgs_th_max"), th_sign, "Vgs(th)"),
                              (("vgs_off_min", "vgs_off_max"), off_sign, "Vgs(off)")):
        for name in names:
            v = cols.get(name, nan)
            with np.errstate(invalid="ignore"):
                wrong = ~np.isnan(v) & ~np.isnan(sign) & (np.sign(v) != sign)
            flag(wrong, name, lambda i, v=v, s=sign, name=name, what=what: (
                f"{name}: {format_quantity(v[i], 'V')} has the wrong sign for the channel and "
                f"mode ({POLARITY_WORDS.get(pols[i], pols[i])} {_mode_word(kinds[i], modes[i])}); "
                f"expected {what} {'positive' if s[i] > 0 else 'negative'}"))
    for low_name, high_name, unit in (("vgs_th_min", "vgs_th_max", "V"),
                                      ("vgs_off_min", "vgs_off_max", "V"),
                                      ("idss_min", "idss_max", "A")):
        lo, hi = cols.get(low_name, nan), cols.get(high_name, nan)
        with np.errstate(invalid="ignore"):
            bad = np.abs(lo) > np.abs(hi)
        flag(bad, low_name, lambda i, lo=lo, hi=hi, a=low_name, b=high_name, u=unit: (
            f"{a}: {format_quantity(lo[i], u)} is beyond {b} {format_quantity(hi[i], u)}; "
            "expected |min| <= |max|"))
    flag(enhancement & (_present(columns.get("idss_min"), n) | _present(columns.get("idss_max"), n)
                        | ~np.isnan(cols.get("vgs_off_min", nan))
                        | ~np.isnan(cols.get("vgs_off_max", nan))), "idss_min", lambda i: (
        "idss_min: an enhancement MOSFET has no Idss or Vgs(off) (they belong to JFETs and "
        "depletion MOSFETs); expected them blank"))
    flag(~np.isnan(cols.get("rds_on", nan)) & np.isnan(cols.get("rds_on_vgs", nan)), "rds_on_vgs",
         lambda i: "rds_on_vgs: missing; expected the gate voltage Rds(on) is specified at")
    qg, qgd = cols.get("qg", nan), cols.get("qgd", nan)
    flag(qgd > qg, "qgd", lambda i: (f"qgd: {format_quantity(qgd[i], 'C')} is above qg "
                                     f"{format_quantity(qg[i], 'C')}; expected qgd <= qg "
                                     "(Qgd is part of the total gate charge)"))
    diode = columns.get("body_diode")
    if diode is not None:
        no_diode = np.array([v is False for v in diode], dtype=bool)
        flag(no_diode & ~np.isnan(cols.get("trr", nan)), "trr", lambda i: (
            "trr: given but body_diode is no; expected trr blank for a MOSFET without a "
            "body diode"))


def _mode_word(kind: str, mode: str | None) -> str:
    if kind == "jfet":
        return "JFET"
    return f"{mode or 'enhancement'} MOSFET"


def settle_columns(columns: dict[str, Any], n: int) -> None:
    """The kind-dependent readings, in place, before the checks: on a bipolar record "n" / "p"
    mean npn / pnp (as they always did); a MOSFET with no mode is an enhancement one (by far the
    common kind, common practice); "depletion" on a JFET says nothing more and is dropped."""
    kinds = columns.get("kind")
    if kinds is None:
        return
    pols = columns.get("polarity")
    if pols is not None:
        columns["polarity"] = [
            {"n": "npn", "p": "pnp"}.get(p, p) if k in BIPOLAR_KINDS or k is None else p
            for k, p in zip(kinds, pols, strict=True)]
    modes = columns.get("mode") or [None] * n
    if "mode" in columns or "mosfet" in kinds or "jfet" in kinds:
        columns["mode"] = [
            ("enhancement" if m is None else m) if k == "mosfet"
            else (None if k == "jfet" and m == "depletion" else m)
            for k, m in zip(kinds, modes, strict=True)]
