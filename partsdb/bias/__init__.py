"""Bias point of a common-emitter stage, and what swapping the transistor does to it.

Three bias networks (resistor names as a technician reads them off the board):

* ``divider``: R1 from the collector-side rail to the base, R2 from the base to the
  emitter-side rail, Rc, Re (Re must be given; 0 is accepted for a grounded emitter, though
  such a stage has no DC feedback and the stability rule then fails).
* ``collector-feedback``: Rb from the collector to the base, Rc, Re (Re may be 0).
* ``fixed``: Rb from the collector-side rail to the base, Rc, Re (Re may be 0).

Sign convention: every voltage and current is a magnitude. An NPN stage is solved as drawn; a
PNP stage is solved as its mirror image (swap every polarity), so Vb, Ve, Vc are measured from
the emitter-side rail towards the collector-side rail and the supply is the magnitude |Vcc|.

Two device models:

* ``fixed-vbe``: the exact Thevenin method with a constant Vbe (Boylestad & Nashelsky,
  *Electronic Devices and Circuit Theory*, ch. 4: Ib = (Vth - Vbe)/(Rth + (beta+1) Re)),
  solved as two linear equations per region: active (Ic = beta Ib), saturation
  (Vce = Vce(sat), Vbe unchanged) and cut-off (no base current).
* ``exponential``: the Ebers-Moll transport equations, i.e. the Gummel-Poon model with only IS
  and BF set (BR = 1, no Early effect, no high injection, no series resistances), which is
  exactly what ngspice solves for ``.model Q NPN(IS= BF=)``: Icc = IS (exp(Vbe/Vt) - 1),
  Iec = IS (exp(Vbc/Vt) - 1), Ic = Icc - 2 Iec, Ib = Icc/BF + Iec. IS comes from the
  record's Vbe(on) at its test current; Vt = kT/q (scipy.constants CODATA values). Saturation
  needs no separate equations here: the forward-biased collector junction is in the model.

Temperature: Vbe falls about 2 mV/K (common practice; DOMAIN notes), applied to Vbe(on) in both
models; collector-base leakage Icbo doubles every 10 K (common practice) and is modelled as a
current source from collector to base inside the device. Its effect on Ic is what the stage
lets through: the stage is solved with and without the source and the difference reported
(``leakage_ic``). With a fixed Vbe that difference is S x Icbo, the stability factor
S = (1 + beta)(1 + RB/RE)/(1 + beta + RB/RE) (Boylestad & Nashelsky, *Electronic Devices and
Circuit Theory*, ch. 4, bias stabilization; from memory), which is (beta + 1) x Icbo only
for an open base. A Darlington's stored Icbo is the pair's own collector leakage, measured at
its terminals: it is added to Ic as it is (a source from collector to emitter), not multiplied
by the pair's gain.

Ambient: from -55 °C to 300 °C, and below the part's Tj max (at or above it the stage is not a
bias question); outside that a clear error names the value.
"""

from __future__ import annotations

from partsdb.bias.report import (
    FIX_TARGET,
    BiasReport,
    Fix,
    FixOption,
    StageResult,
    analyse_bias,
    analyse_stage,
    predict_swap,
    solve_fix,
    stability,
)
from partsdb.bias.solve import (
    Point,
    check_ambient,
    resolve_model,
    solve_exponential,
    solve_fixed_vbe,
    solve_point,
    stability_factor,
)
from partsdb.bias.stage import (
    ACTIVE,
    AMBIENT_MAX,
    AMBIENT_MIN,
    CUT_OFF,
    CUT_OFF_FRACTION,
    FIRM_FACTOR,
    ICBO_GE_ASSUMED,
    LEAKAGE_DOUBLING,
    MODELS,
    NETWORKS,
    SATURATION,
    STIFF_FACTOR,
    SUPPLY_RULE,
    T_REFERENCE,
    VBE_DARLINGTON,
    VBE_DEFAULT,
    VBE_FLOOR,
    VBE_TEMPCO,
    VCE_SAT_DARLINGTON,
    VCE_SAT_DEFAULT,
    BiasError,
    Stage,
    TransistorParams,
    alpha_from_beta,
    beta_from_alpha,
    leakage_at,
    params_from_device,
    saturation_current,
    supply_magnitude,
    thermal_voltage,
    typical_hfe,
    vbe_at,
)

__all__ = [
    "ACTIVE",
    "AMBIENT_MAX",
    "AMBIENT_MIN",
    "CUT_OFF",
    "CUT_OFF_FRACTION",
    "FIRM_FACTOR",
    "FIX_TARGET",
    "ICBO_GE_ASSUMED",
    "LEAKAGE_DOUBLING",
    "MODELS",
    "NETWORKS",
    "SATURATION",
    "STIFF_FACTOR",
    "SUPPLY_RULE",
    "T_REFERENCE",
    "VBE_DARLINGTON",
    "VBE_DEFAULT",
    "VBE_FLOOR",
    "VBE_TEMPCO",
    "VCE_SAT_DARLINGTON",
    "VCE_SAT_DEFAULT",
    "BiasError",
    "BiasReport",
    "Fix",
    "FixOption",
    "Point",
    "Stage",
    "StageResult",
    "TransistorParams",
    "alpha_from_beta",
    "analyse_bias",
    "analyse_stage",
    "beta_from_alpha",
    "check_ambient",
    "leakage_at",
    "params_from_device",
    "predict_swap",
    "resolve_model",
    "saturation_current",
    "solve_exponential",
    "solve_fix",
    "solve_fixed_vbe",
    "solve_point",
    "stability",
    "stability_factor",
    "supply_magnitude",
    "thermal_voltage",
    "typical_hfe",
    "vbe_at",
]
