"""The calorimeter's own heat capacity C_cal ("calorimeter constant"), by three methods.

* Electrical: a known energy Q (V·I·t, P·t, or a logged power channel integrated by the
  trapezoid rule) gives C_total = Q/ΔT, and C_cal = C_total − Σ m_i·c_p,i.
* Mixing: hot water poured onto cold water in the calorimeter; with T_f extrapolated to the
  mixing time, C_cal = [m_h c_p,h (T_h − T_f) − m_c c_p,c (T_f − T_c)]/(T_f − T_c).
  The textbook form uses one c_p; here c_p,h and c_p,c are water at each stream's mean
  temperature unless given.
* Reference reaction or dissolution: a process of known ΔH (per gram or per mole) times the
  amount gives q = −ΔH·amount, then C_total = q/ΔT as above.

Repeated calibrations combine in :func:`combine_calibrations` (weighted mean; the scatter enters
the uncertainty when it exceeds what the individual uncertainties explain).

Each result is a :class:`heatlog.gum.Budget` in J/K whose components are the primitive inputs.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

import numpy as np
from scipy import integrate

from heatlog.energetics.heat import Content, as_input, content_inputs, heat_capacity_sum, substitute
from heatlog.energetics.water import CP_RELATIVE_U, water_cp
from heatlog.errors import CalibrationError, InputError, RangeError
from heatlog.gum import Budget, Component, Input, propagate, rectangular

#: Ends of the temperature range a reference process may be used in, and the two ways the
#: final concentration is stated.
KELVIN = 273.15


@dataclass(frozen=True)
class ReferenceProcess:
    """A process with a certified or published enthalpy, usable to calibrate a calorimeter.

    ``dh`` holds at 25 °C and the reference concentration ``conc_ref``; :meth:`enthalpy` moves
    it to the run's mean temperature with ``dcp`` (Kirchhoff) and to the run's final
    concentration with ``conc_term``, each with its own uncertainty as a budget row, and refuses
    outside ``t_range_c`` and ``conc_range``, where the published dependence is not known to hold.
    """

    key: str
    description: str
    dh: Input  # J per unit of `per`, at 25 °C and conc_ref
    per: str  # "g" or "mol"
    conditions: str
    source: str
    hazard: str
    dcp: Input  # d(ΔH)/dT, J per unit of `per` per K
    dcp_source: str
    t_range_c: tuple[float, float]
    conc_unit: str  # unit of the final concentration: "mol/kg" (molality) or "g/kg"
    conc_ref: float
    conc_range: tuple[float, float]
    conc_source: str
    conc_term: Callable[[float], tuple[float, float]] | None = None  # ΔH(c) − ΔH(c_ref), u

    def concentration(self, amount: float, water_g: float) -> float:
        """Final concentration from the amount dissolved (g or mol) and the water (or dilute
        acid) it went into, g: molality for a per-mole process, g per kg for a per-gram one."""
        if not (water_g > 0 and math.isfinite(water_g)):
            raise InputError(
                f"the final concentration of {self.key} needs the mass of liquid it dissolved in"
            )
        return amount / (water_g / 1000.0)

    def enthalpy(self, t_c: float, concentration: float, u_t: float = 0.0) -> Budget:
        """ΔH of the process at ``t_c`` (°C) and ``concentration`` with its budget (J per unit).

        ΔH(T, c) = ΔH(25 °C, c_ref) + ΔCp·(T − 25 °C) + [ΔH(c) − ΔH(c_ref)]; ``u_t`` is the
        standard uncertainty of the temperature the process ran at (it spans the rise).
        """
        lo, hi = self.t_range_c
        if not (math.isfinite(t_c) and lo <= t_c <= hi):
            raise RangeError(
                f"{self.key}: the run's mean temperature {t_c:.2f} °C is outside "
                f"{lo + KELVIN:.2f}–{hi + KELVIN:.2f} K ({lo:g}–{hi:g} °C), the range where its "
                f"published temperature dependence holds ({self.dcp_source}); run the calibration "
                "inside it or use an electrical calibration"
            )
        clo, chi = self.conc_range
        if not (math.isfinite(concentration) and clo <= concentration <= chi):
            raise RangeError(
                f"{self.key}: the final concentration {concentration:.4g} {self.conc_unit} is "
                f"outside {clo:g}–{chi:g} {self.conc_unit}, the range where its enthalpy is known "
                f"({self.conc_source}); change the amount or the liquid's mass"
            )
        unit = self.dh.unit
        term, u_term = (0.0, 0.0) if self.conc_term is None else self.conc_term(concentration)
        comps = [
            Component(
                f"ΔH_ref(25 °C, {self.conc_ref:g} {self.conc_unit})",
                self.dh.value,
                self.dh.u,
                1.0,
                unit,
                note=f"{self.source}; {self.dh.note}",
            ),
            Component(
                "ΔCp_ref", self.dcp.value, self.dcp.u, t_c - 25.0, f"{unit}/K", note=self.dcp_source
            ),
            Component(
                "T of the reference process",
                t_c,
                u_t,
                self.dcp.value,
                "°C",
                note="the run's mean temperature; u spans the rise (rectangular, ±ΔT/2)",
            ),
            Component(
                f"ΔH_ref concentration term ({concentration:.4g} {self.conc_unit})",
                term,
                u_term,
                1.0,
                unit,
                note=self.conc_source,
            ),
        ]
        value = self.dh.value + self.dcp.value * (t_c - 25.0) + term
        return Budget(
            f"ΔH_ref of {self.key} at {t_c:.2f} °C, {concentration:.4g} {self.conc_unit}",
            value,
            unit,
            tuple(comps),
        )


# KCl(s) -> K+ + Cl- in water: the Pitzer relative apparent molar enthalpy ΦL(m) at 25 °C,
#   ΦL = ν|z+z-|·(A_H/2b)·ln(1 + b√m) − 2ν+ν-·R·T²·(m·B^L + m²·C^L),
#   B^L = β0L + β1L·g(α√m), g(x) = 2[1 − (1 + x)e^(−x)]/x², b = 1.2, α = 2,
# with A_H/RT = 0.8010 kg^½ mol^-½ (Pitzer 1991) and the KCl parameters β0L = 5.794e-4,
# β1L = 1.071e-3, C^L = −5.095e-5 kg/(mol·K) (Silvester & Pitzer 1977) — all from memory
# (docs/REFERENCES.md: PITZER-KCL). The certified ΔH at 0.111 mol/kg moves by ΦL(m) − ΦL(0.111)
# (ΔsolH(m) = ΔsolH° + ΦL(m)). Check: 17.584 − ΦL(0.111) = 17.236 kJ/mol against Parker's
# infinite-dilution 17.22 kJ/mol (docs/REFERENCES.md: PARKER1965), tested.
_R = 8.314462618
_T25 = 298.15
_A_H = 0.8010 * _R * _T25  # J kg^½ mol^-3/2
_KCL_B0L, _KCL_B1L, _KCL_CL = 5.794e-4, 1.071e-3, -5.095e-5


def kcl_phi_l(m: float) -> float:
    """Relative apparent molar enthalpy ΦL of KCl(aq) at 25 °C and molality ``m``, J/mol."""
    if m <= 0:
        return 0.0
    sq = math.sqrt(m)
    x = 2.0 * sq
    g = 2.0 * (1.0 - (1.0 + x) * math.exp(-x)) / (x * x)
    bl = _KCL_B0L + _KCL_B1L * g
    return 2.0 * _A_H / 2.4 * math.log1p(1.2 * sq) - 2.0 * _R * _T25**2 * (m * bl + m * m * _KCL_CL)


KCL_M_REF = 0.111


def _kcl_conc_term(m: float) -> tuple[float, float]:
    d = kcl_phi_l(m) - kcl_phi_l(KCL_M_REF)
    # u: 10 % of the correction plus 5 J/mol (common practice, no source): the parameters are
    # recalled, and the 17.236 vs 17.22 kJ/mol check above agrees within 16 J/mol.
    return d, 0.10 * abs(d) + 5.0


REFERENCE_PROCESSES: dict[str, ReferenceProcess] = {
    p.key: p
    for p in (
        ReferenceProcess(
            "tris-hcl",
            "tris(hydroxymethyl)aminomethane (SRM 724a) dissolved in 0.1 mol/L HCl",
            # The paper's ± is an overall uncertainty; read here as k = 2 (twice the standard
            # deviation of the mean plus systematic allowances, as that paper builds it; the
            # reading is from memory, docs/REFERENCES.md: PROSEN1973).
            Input(-245.76, 0.13, "J/g", note="±0.26 J/g read as U (k = 2), reading from memory"),
            "g",
            "293–303 K, about 0.5 g tris per 100 mL of 0.1 mol/L HCl (5 g per kg)",
            "Prosen & Kilday, J. Res. NBS 77A (1973) 581 (docs/REFERENCES.md: PROSEN1973)",
            "acid",
            Input(1.435, 0.0115, "J/(g·K)", note="±0.023 read as U (k = 2), reading from memory"),
            "ΔCp = +1.435 ± 0.023 J/(g·K), 293–303 K, Prosen & Kilday 1973 "
            "(docs/REFERENCES.md: PROSEN1973)",
            (20.0, 30.0),
            "g/kg",
            5.0,
            (3.0, 7.0),
            "the certified condition, about 0.5 g per 100 mL, ±2 g/kg (common practice, no "
            "source: no concentration dependence is modelled inside this window)",
        ),
        ReferenceProcess(
            "kcl",
            "potassium chloride (SRM 1655) dissolved in water",
            Input(17584.0, 8.5, "J/mol", note="±0.017 kJ/mol read as U (k = 2), from memory"),
            "mol",
            "293–303 K, final molality 0.02–0.5 mol/kg (certified at 298.15 K, 0.111 mol/kg)",
            "Kilday, J. Res. NBS 85 (1980) 467, SRM 1655 (docs/REFERENCES.md: KILDAY1980)",
            "",
            Input(-148.0, 10.0, "J/(mol·K)", note="derived, see source"),
            "ΔCp = Φcp(KCl, aq, 0.111 mol/kg) − Cp(KCl, s) = −97 − 51.3 J/(mol·K), Φcp from "
            "Laliberté's KCl fit (docs/REFERENCES.md: LALIBERTE2009), Cp(s) from the CRC table in "
            "the chemicals package (docs/REFERENCES.md: CRC-CHEMICALS); u = 10 J/(mol·K) covers "
            "Φcp over 0.02–0.5 mol/kg and 20–30 °C and the infinite-dilution value (common "
            "practice, no source); range kept to that of tris",
            (20.0, 30.0),
            "mol/kg",
            KCL_M_REF,
            (0.02, 0.5),
            "Pitzer ΦL(m) − ΦL(0.111), Silvester & Pitzer 1977 parameters (from memory; "
            "docs/REFERENCES.md: PITZER-KCL)",
            _kcl_conc_term,
        ),
    )
}


def _positive(name: str, x: Input) -> Input:
    if not (math.isfinite(x.value) and x.value > 0):
        raise InputError(f"{name} must be a positive number, got {x.value}")
    if not (math.isfinite(x.u) and x.u >= 0):
        raise InputError(f"uncertainty of {name} must be zero or positive, got {x.u}")
    return x


def electrical_energy(voltage: Input, current: Input, seconds: Input) -> Budget:
    """Q = V·I·t in J (heater voltage by 4-wire sense, current from a shunt, heating time)."""
    inputs = {
        "V": _positive("heater voltage", as_input(voltage, "V")),
        "I": _positive("heater current", as_input(current, "A")),
        "t_heat": _positive("heating time", as_input(seconds, "s")),
    }
    return propagate(
        lambda **x: x["V"] * x["I"] * x["t_heat"], inputs, quantity="Q = V·I·t", unit="J"
    )


def power_energy(power: Input, seconds: Input) -> Budget:
    """Q = P·t in J for a heater of known steady power."""
    inputs = {
        "P": _positive("heater power", as_input(power, "W")),
        "t_heat": _positive("heating time", as_input(seconds, "s")),
    }
    return propagate(lambda P, t_heat: P * t_heat, inputs, quantity="Q = P·t", unit="J")


def logged_energy(
    time_s: np.ndarray,
    power_w: np.ndarray,
    *,
    u_power_rel: float,
    u_time_rel: float = 0.0,
) -> Budget:
    """Q = ∫P dt by the trapezoid rule over a logged heater power channel.

    ``u_power_rel`` is the relative standard uncertainty of the power channel's scale (a gain
    error common to every sample, so it scales Q as a whole); ``u_time_rel`` that of the time base.
    The integration error is estimated as the difference between the trapezoid and Simpson
    rules, taken as the half-width of a rectangular distribution.
    """
    t = np.asarray(time_s, dtype=float)
    p = np.asarray(power_w, dtype=float)
    if t.ndim != 1 or t.shape != p.shape or t.size < 3:
        raise InputError("the power log needs matching time and power columns with ≥ 3 rows")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(p))):
        raise InputError("the power log holds a non-finite value")
    if np.any(np.diff(t) <= 0):
        raise InputError("the power log's times must increase strictly; sort it or drop repeats")
    q = float(integrate.trapezoid(p, t))
    if q <= 0:
        raise InputError(f"the logged heater energy is {q:.4g} J; expected a positive energy")
    integration = rectangular(q - float(integrate.simpson(p, x=t)))
    comps = (
        Component("∫P dt (trapezoid)", q, 0.0, 1.0, "J", note=f"{t.size} samples"),
        Component("power scale", 1.0, u_power_rel, q, "", note="gain error common to all samples"),
        Component("time base", 1.0, u_time_rel, q, ""),
        Component("integration rule", 0.0, integration, 1.0, "J", note="|trapezoid − Simpson|/√3"),
    )
    return Budget("Q = ∫P dt", q, "J", comps)


def _c_cal_from_heat(
    q_inputs: dict[str, Input],
    q_of: Callable[[dict[str, float]], float],
    delta_t: Input,
    contents: Sequence[Content],
    quantity: str,
) -> Budget:
    dt = as_input(delta_t, "K")
    if not (math.isfinite(dt.value) and dt.value != 0):
        raise InputError(f"ΔT must be a non-zero number, got {dt.value}")
    inputs = dict(q_inputs)
    inputs["ΔT"] = dt
    inputs.update(content_inputs(contents))

    def c_cal(**x: float) -> float:
        return q_of(x) / x["ΔT"] - heat_capacity_sum(contents, x)

    b = propagate(c_cal, inputs, quantity=quantity, unit="J/K")
    if b.value + heat_capacity_sum(contents, {k: v.value for k, v in inputs.items()}) <= 0:
        raise CalibrationError(
            f"the total heat capacity comes out {b.value:.4g} J/K + contents ≤ 0: the sign of ΔT "
            "does not match the heat (an exothermic process warms, an endothermic one cools)"
        )
    return b


def electrical_calibration(
    energy: Budget | Input, delta_t: Input, contents: Sequence[Content]
) -> Budget:
    """C_cal = Q/ΔT − Σ m_i c_p,i (J/K) from an electrical energy and the corrected ΔT.

    When ``energy`` is a budget (from :func:`electrical_energy`, :func:`power_energy` or
    :func:`logged_energy`) its components appear in the result by the chain rule.
    """
    q = as_input(energy, "J")
    _positive("electrical energy", q)
    b = _c_cal_from_heat(
        {"Q": q}, lambda x: x["Q"], delta_t, contents, "C_cal (electrical calibration)"
    )
    return substitute(b, "Q", energy) if isinstance(energy, Budget) else b


def mixing_calibration(
    m_hot: Input,
    t_hot: Input,
    m_cold: Input,
    t_cold: Input,
    t_final: Input,
    *,
    cp_hot: Input | None = None,
    cp_cold: Input | None = None,
) -> Budget:
    """C_cal by the method of mixtures (J/K); temperatures in °C, masses in g.

    The cold water is in the calorimeter at T_c; the hot water at T_h is added; T_f is the
    common temperature extrapolated back to the mixing time. The three temperatures are taken as
    uncorrelated; if one probe read them all, its calibration offset largely cancels in the
    differences and this budget is conservative.
    """
    th, tc, tf = t_hot.value, t_cold.value, t_final.value
    if not (tc < tf < th):
        raise InputError(
            f"need T_cold < T_final < T_hot, got {tc:g}, {tf:g}, {th:g} °C; check the order"
        )
    inputs = {
        "m_h": _positive("hot water mass", as_input(m_hot, "g")),
        "T_h": as_input(t_hot, "°C"),
        "m_c": _positive("cold water mass", as_input(m_cold, "g")),
        "T_c": as_input(t_cold, "°C"),
        "T_f": as_input(t_final, "°C"),
    }
    # One c_p error shared by both streams is one input, not two: IAPWS-95's uncertainty (or a
    # single given c_p) scales both, and largely cancels in the numerator.
    if cp_hot is None and cp_cold is None:
        base_h = float(water_cp((th + tf) / 2))
        base_c = float(water_cp((tc + tf) / 2))
        inputs["c_p scale"] = Input(
            1.0, CP_RELATIVE_U, "", note="IAPWS-95 water c_p at each stream's mean temperature"
        )
    elif cp_hot is not None and cp_cold is not None and cp_hot != cp_cold:
        inputs["c_p,h"], inputs["c_p,c"] = cp_hot, cp_cold
    else:
        inputs["c_p"] = cp_hot if cp_hot is not None else cp_cold  # type: ignore[assignment]

    def cps(x: dict[str, float]) -> tuple[float, float]:
        if "c_p scale" in x:
            return base_h * x["c_p scale"], base_c * x["c_p scale"]
        if "c_p" in x:
            return x["c_p"], x["c_p"]
        return x["c_p,h"], x["c_p,c"]

    def c_cal(**x: float) -> float:
        c_h, c_c = cps(x)
        m_h, m_c, t_h, t_c, t_f = x["m_h"], x["m_c"], x["T_h"], x["T_c"], x["T_f"]
        return (m_h * c_h * (t_h - t_f) - m_c * c_c * (t_f - t_c)) / (t_f - t_c)

    return propagate(c_cal, inputs, quantity="C_cal (method of mixtures)", unit="J/K")


def reaction_calibration(
    process: ReferenceProcess | Input,
    amount: Input,
    delta_t: Input,
    contents: Sequence[Content],
    *,
    t_c: float | None = None,
    concentration: float | None = None,
    u_t: float = 0.0,
) -> Budget:
    """C_cal from a process of known enthalpy (J per g or per mol, matching ``amount``).

    q = −ΔH·amount is the heat the calorimeter takes up; C_cal = q/ΔT − Σ m_i c_p,i. A
    :class:`ReferenceProcess` is evaluated at the run's mean temperature ``t_c`` (°C) and final
    ``concentration`` (its ``conc_unit``), both required; its temperature uncertainty is ``u_t``
    combined with the span of the rise (rectangular, ±ΔT/2), and the rows of
    :meth:`ReferenceProcess.enthalpy` appear in the budget.
    """
    ref_budget: Budget | None = None
    if isinstance(process, ReferenceProcess):
        if t_c is None or concentration is None:
            raise InputError(
                f"the enthalpy of {process.key} depends on the run's mean temperature and final "
                f"concentration ({process.conc_unit}); give both"
            )
        span = abs(delta_t.value) / math.sqrt(12.0) if math.isfinite(delta_t.value) else 0.0
        ref_budget = process.enthalpy(t_c, concentration, math.hypot(u_t, span))
        dh = as_input(ref_budget, process.dh.unit)
    else:
        dh = process
    if not (math.isfinite(dh.value) and dh.value != 0):
        raise InputError(f"the reference enthalpy must be a non-zero number, got {dh.value}")
    per = process.per if isinstance(process, ReferenceProcess) else ""
    q_inputs = {
        "ΔH_ref": dh,
        "amount": _positive("amount of reference substance", as_input(amount, per)),
    }
    name = process.key if isinstance(process, ReferenceProcess) else "given process"
    b = _c_cal_from_heat(
        q_inputs,
        lambda x: -x["ΔH_ref"] * x["amount"],
        delta_t,
        contents,
        f"C_cal (reference process: {name})",
    )
    return b if ref_budget is None else substitute(b, "ΔH_ref", ref_budget)


def combine_calibrations(results: Sequence[Input | Budget]) -> Budget:
    """Weighted mean of repeated calibrations, with the scatter in the uncertainty.

    Weights 1/u_i². The uncertainty is the largest of: the internal one 1/√Σw, that times the
    Birge ratio R_B = √(χ²/(n−1)), and the type-A standard deviation of the plain mean s/√n.
    The budget shows the internal part and, as a type-A component with n−1 degrees of freedom,
    the extra scatter. The runs are taken as independent; errors they share (same thermometer,
    same water c_p) do not average down, so carry those separately when they matter.
    """
    xs = [as_input(r) for r in results]
    n = len(xs)
    if n < 2:
        raise InputError(f"need at least 2 calibrations to combine, got {n}")
    if any(not (x.u > 0) for x in xs):
        raise InputError("every calibration needs a positive standard uncertainty to be weighted")
    v = np.array([x.value for x in xs])
    w = 1.0 / np.array([x.u for x in xs]) ** 2
    mean = float(np.sum(w * v) / np.sum(w))
    u_int = float(1.0 / math.sqrt(np.sum(w)))
    birge = math.sqrt(float(np.sum(w * (v - mean) ** 2)) / (n - 1))
    u_a = float(np.std(v, ddof=1) / math.sqrt(n))
    u = max(u_int, u_int * birge, u_a)
    extra = math.sqrt(max(u**2 - u_int**2, 0.0))
    unit = xs[0].unit or "J/K"
    comps = (
        Component("weighted mean (internal)", mean, u_int, 1.0, unit, note=f"{n} calibrations"),
        Component(
            "scatter beyond stated u",
            0.0,
            extra,
            1.0,
            unit,
            dof=n - 1,
            evaluation="A",
            note=f"Birge ratio {birge:.3g}; s/√n = {u_a:.3g}",
        ),
    )
    b = Budget("C_cal (weighted mean of repeats)", mean, unit, comps)
    # Student-t coverage factor for the Welch–Satterthwaite ν_eff (JCGM 100, G.4).
    return replace(b, k=b.coverage_factor())
