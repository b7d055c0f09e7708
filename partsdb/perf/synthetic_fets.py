"""FETs in the synthetic catalog: a share of the silicon rows become MOSFETs and JFETs.

Invented like the rest of :mod:`partsdb.perf.synthetic`; the spreads are common practice, not
measured data. A converted row keeps its class's package, Ptot, its reference and Tj max (so a
Pro Electron name still agrees with its power class), loses every bipolar rating, and gets
plausible FET fields: Vds near the class's voltages, Rds(on) growing steeply with Vds and
falling with current (common practice: the silicon limit goes about as Vds^2.5 per die area;
Vds^1.5 here, across the mixed technologies of a real drawer), Qg and Ciss scaling with the
die, Vgs(th) 2-4 V (1-2.5 V for a logic-level gate), JFET Idss and Vgs(off) windows as the rank
letters of small-signal JFETs spread them. Signs follow the channel and mode (an N-channel
enhancement threshold positive, a JFET's or depletion part's cut-off negative; P-channel the
other way round).
JIS names are re-lettered 2SK (N-channel) or 2SJ (P-channel), so every name agrees with its
record. A separate random stream is used, so a catalog drawn without FETs is unchanged.
"""

from __future__ import annotations

from typing import Any

import numpy as np

MOSFET_SHARE = 0.20
JFET_SHARE = 0.05
"""Shares of the whole catalog the bench draws (germanium rows stay bipolar)."""

FET_NUMBERS: tuple[str, ...] = (
    "vds", "vgs_max", "id_max", "rds_on", "rds_on_vgs", "rds_on_id", "vgs_th_min", "vgs_th_max",
    "qg", "qgd", "ciss", "trr", "vgs_off_min", "vgs_off_max", "idss_min", "idss_max", "yfs",
    "yfs_id", "en")
FET_TEXT: tuple[str, ...] = ("mode", "id_max_ref", "body_diode")
BIPOLAR_NUMBERS: tuple[str, ...] = ("vceo", "vcbo", "vebo", "ic_max", "hfe_min", "hfe_max",
                                    "hfe_ic", "ft", "vbe_on", "vbe_ic", "vce_sat", "icbo")

_IDSS_WINDOWS = ((0.6e-3, 1.4e-3), (1.2e-3, 3.0e-3), (2.6e-3, 6.5e-3), (6.0e-3, 14e-3),
                 (10e-3, 20e-3), (2.0e-3, 20e-3))
_VGS_OFF_WINDOWS = ((0.2, 1.5), (0.4, 2.5), (1.0, 6.0), (0.5, 8.0), (0.3, 1.2))
_SMALL_PINOUTS = ("GDS", "GSD", "SGD", "DGS", "DSG")


def _sig2(values: np.ndarray) -> np.ndarray:
    exp = np.floor(np.log10(values))
    scale = 10.0 ** (exp - 1)
    return np.round(values / scale) * scale


def _loguniform(rng: np.random.Generator, lo: float, hi: float, size: int) -> np.ndarray:
    return _sig2(np.exp(rng.uniform(np.log(lo), np.log(hi), size)))


def add_fets(seed: int, n: int, num: dict[str, np.ndarray], text: dict[str, np.ndarray],
             polarity: np.ndarray, names: np.ndarray, mosfet_share: float,
             jfet_share: float) -> tuple[np.ndarray, np.ndarray]:
    """Turn a share of the silicon rows into FETs, in place; returns (polarity, names)."""
    for name in FET_NUMBERS:
        num[name] = np.full(n, np.nan)
    for name in FET_TEXT:
        text[name] = np.full(n, "", dtype=object)
    if mosfet_share <= 0 and jfet_share <= 0:
        return polarity, names
    rng = np.random.default_rng(seed + 2)
    silicon = text["material"] == "si"
    small = text["ptot_ref"] == "ambient"
    fraction = max(float(silicon.mean()), 1e-9)
    u = rng.random(n)
    mos = silicon & (u < mosfet_share / fraction)
    # JFETs from the small-signal rows only, at the share of the whole catalog asked for.
    small_fraction = max(float((silicon & small).mean()), 1e-9)
    jf = silicon & small & ~mos & (rng.random(n) < jfet_share / small_fraction)
    polarity = polarity.astype("<U3").copy()
    for name in BIPOLAR_NUMBERS:
        num[name][mos | jf] = np.nan
    _draw_mosfets(rng, np.flatnonzero(mos), num, text, polarity)
    _draw_jfets(rng, np.flatnonzero(jf), num, text, polarity)
    return polarity, _jis_letters(names, mos | jf, polarity)


def _draw_mosfets(rng: np.random.Generator, rows: np.ndarray, num: dict[str, np.ndarray],
                  text: dict[str, np.ndarray], polarity: np.ndarray) -> None:
    m = rows.size
    if not m:
        return
    p = rng.random(m) < 0.25
    polarity[rows] = np.where(p, "p", "n")
    depletion = rng.random(m) < 0.03
    text["kind"][rows] = "mosfet"
    text["mode"][rows] = np.where(depletion, "depletion", "enhancement")
    power = text["ptot_ref"][rows] == "case"
    vds = _sig2(np.where(power, rng.choice([40, 60, 100, 150, 200, 250, 400, 500, 600, 800], m),
                         rng.choice([20, 30, 50, 60, 100], m)).astype(float))
    # A case-rated part's current follows its dissipation (a TO-202 at 9 W is no 80 A part).
    ptot = num["ptot"][rows]
    ids = _sig2(np.where(power, np.clip(np.nan_to_num(ptot, nan=40.0) * rng.uniform(0.1, 0.4, m),
                                        1.0, 200.0),
                         np.exp(rng.uniform(np.log(0.1), np.log(2), m))))
    num["vds"][rows] = vds
    num["id_max"][rows] = ids
    text["id_max_ref"][rows] = text["ptot_ref"][rows]
    logic = rng.random(m) < 0.3
    num["vgs_max"][rows] = np.where(logic, rng.choice([12.0, 16.0, 20.0], m), 20.0)
    rds = 0.03 * (vds / 60.0) ** 1.5 / (ids / 10.0) * np.exp(rng.uniform(-0.7, 0.7, m))
    num["rds_on"][rows] = _sig2(np.clip(rds, 2e-3, 200.0))
    num["rds_on_vgs"][rows] = np.where(logic, rng.choice([4.5, 5.0, 2.5], m), 10.0)
    num["rds_on_id"][rows] = _sig2(ids / 2)
    sign = np.where(p, -1.0, 1.0) * np.where(depletion, -1.0, 1.0)
    lo = np.where(depletion, rng.choice([0.5, 1.0], m), np.where(logic, 1.0, 2.0))
    hi = np.where(depletion, rng.choice([2.5, 3.5], m), np.where(logic, rng.choice([2.0, 2.5], m),
                                                                 4.0))
    num["vgs_th_min"][rows] = sign * lo
    num["vgs_th_max"][rows] = sign * hi
    qg = _sig2(np.clip(6e-9 * (ids / 10.0) * (vds / 60.0) ** 0.5 * np.exp(rng.uniform(-0.5, 0.5, m)),
                       0.5e-9, 5e-6))
    num["qg"][rows] = qg
    num["qgd"][rows] = _sig2(qg * rng.uniform(0.25, 0.5, m))
    num["ciss"][rows] = _sig2(qg * rng.uniform(0.02, 0.05, m))
    text["body_diode"][rows] = np.where(rng.random(m) < 0.85, "yes", "")
    trr = _sig2(np.exp(rng.uniform(np.log(40e-9), np.log(500e-9), m)))
    num["trr"][rows] = np.where((text["body_diode"][rows] == "yes") & (rng.random(m) < 0.7),
                                trr, np.nan)
    # A depletion MOSFET is chosen by its Idss (like a JFET) and cut off below its threshold.
    d = rows[depletion]
    if d.size:
        num["idss_min"][d] = rng.choice([1e-3, 5e-3, 20e-3], d.size)
        num["idss_max"][d] = num["idss_min"][d] * 4
    for name, share in (("qgd", 0.3), ("ciss", 0.2), ("vgs_max", 0.1), ("rds_on_id", 0.2)):
        num[name][rows[rng.random(m) < share]] = np.nan
    text["pinout"][rows] = np.where(power, "GDS", rng.choice(_SMALL_PINOUTS, m)).astype(object)


def _draw_jfets(rng: np.random.Generator, rows: np.ndarray, num: dict[str, np.ndarray],
                text: dict[str, np.ndarray], polarity: np.ndarray) -> None:
    m = rows.size
    if not m:
        return
    p = rng.random(m) < 0.15
    polarity[rows] = np.where(p, "p", "n")
    text["kind"][rows] = "jfet"
    num["vds"][rows] = rng.choice([25.0, 30.0, 40.0, 50.0], m)
    window = rng.integers(0, len(_IDSS_WINDOWS), m)
    num["idss_min"][rows] = np.array([w[0] for w in _IDSS_WINDOWS])[window]
    num["idss_max"][rows] = np.array([w[1] for w in _IDSS_WINDOWS])[window]
    cut = rng.integers(0, len(_VGS_OFF_WINDOWS), m)
    sign = np.where(p, 1.0, -1.0)  # N-channel: cut off with the gate negative
    num["vgs_off_min"][rows] = sign * np.array([w[0] for w in _VGS_OFF_WINDOWS])[cut]
    num["vgs_off_max"][rows] = sign * np.array([w[1] for w in _VGS_OFF_WINDOWS])[cut]
    num["yfs"][rows] = _loguniform(rng, 2e-3, 40e-3, m)
    num["yfs_id"][rows] = np.where(rng.random(m) < 0.7, rng.choice([1e-3, 2e-3, 5e-3], m), np.nan)
    num["ciss"][rows] = np.where(rng.random(m) < 0.8, _loguniform(rng, 3e-12, 30e-12, m), np.nan)
    num["en"][rows] = np.where(rng.random(m) < 0.3, _loguniform(rng, 0.9e-9, 10e-9, m), np.nan)
    num["id_max"][rows] = np.where(rng.random(m) < 0.4, 10e-3, np.nan)
    text["id_max_ref"][rows] = np.where(np.isnan(num["id_max"][rows]), "", "ambient")
    text["pinout"][rows] = rng.choice(_SMALL_PINOUTS, m).astype(object)


def _jis_letters(names: np.ndarray, fet: np.ndarray, polarity: np.ndarray) -> np.ndarray:
    """2SA..2SD names of FET rows re-lettered 2SK / 2SJ (JIS C 7012: K N-channel, J P-channel);
    a re-lettered name that another row already has gets a numbered house name instead."""
    out = names.copy()
    jis = fet & np.char.startswith(names.astype(str), "2S")
    rows = np.flatnonzero(jis)
    letter = np.where(polarity[rows] == "p", "2SJ", "2SK")
    out[rows] = np.char.add(letter, np.array([s[3:] for s in names[rows].tolist()]))
    taken: set[Any] = set(names[~jis].tolist())
    for i in rows.tolist():
        if out[i] in taken:
            out[i] = f"QF{i:07d}"  # "QF" starts no scheme and no other house prefix
        taken.add(out[i])
    return out
