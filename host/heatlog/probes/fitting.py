"""Calibration fits: probe-model coefficients from (temperature, resistance) points.

Pure functions on arrays. Linear least squares where the model is linear in its coefficients:

* Steinhart–Hart: 1/T = A + B x + C x³ (+ D x²), x = ln R, weighted by T² so that the residual
  being minimised is (to first order) a temperature error in kelvin;
* Callendar–Van Dusen: R = R0 + (R0A) t + (R0B) t² + (R0C)(t − 100) t³ with R0 free, or
  R/R0 − 1 = A t + B t² + C (t − 100) t³ with R0 fixed; weighted by 1/(dR/dt) of the IEC 60751
  curve. C is fitted only when there are points below 0 °C far enough down to show it (at or
  below :data:`C_FIT_BELOW_C`); otherwise it keeps the IEC 60751 value, stated in the notes;

and ``scipy.optimize.least_squares`` in kelvin residuals for the β model (started from the
linear fit of ln R against 1/T).

Uncertainty: the coefficient covariance is Σ = s²(JᵀJ)⁻¹ with J = ∂T/∂coefficients at the points
and s² = Σr²/ν the residual variance (ν degrees of freedom). With ν = 0 the scatter cannot be
judged, so Σ comes from the reference thermometer's uncertainty alone, u_ref²(JᵀJ)⁻¹, and a
warning says so. The curve's standard uncertainty at t is u_fit(t) = √(gᵀΣg), g = ∂T/∂coefficients
at R(t) (JCGM 100:2008 law of propagation with correlated inputs), combined with the reference
uncertainty as u(t) = √(u_fit(t)² + u_ref²).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.optimize import least_squares

from heatlog.errors import CalibrationError
from heatlog.probes.chains import Chain
from heatlog.probes.models import MODEL_KINDS, MODEL_NAMES, ProbeModel, build_model
from heatlog.probes.rtd import IEC_A, IEC_B, IEC_C, IEC_RANGE_C
from heatlog.probes.thermistor import THERMISTOR_LIMITS_C, ZERO_CELSIUS_K

#: C of Callendar–Van Dusen is fitted only with a point at or below this temperature: there the
#: IEC 60751 C term, C(t − 100)t³/A, reaches about 1 mK (derived); closer to 0 °C the points
#: cannot tell C from noise.
C_FIT_BELOW_C = -20.0

# Coefficients each model needs to fit (the minimum number of points).
_FITTED = {
    "steinhart-hart": ("A", "B", "C"),
    "steinhart-hart-4": ("A", "B", "C", "D"),
    "beta": ("R25", "beta"),
}


@dataclass(frozen=True, eq=False)
class CalibrationFit:
    """A fitted probe model with its residuals and uncertainty."""

    model: ProbeModel
    fitted: tuple[str, ...]  # coefficients that were fitted, in covariance order
    covariance: np.ndarray  # of the fitted coefficients
    temp_C: np.ndarray
    resistance_ohm: np.ndarray
    residuals_K: np.ndarray  # model temperature at each point's resistance minus its temperature
    dof: int
    ref_u_K: float
    range_C: tuple[float, float]
    covariance_from: str  # "residuals" or "reference uncertainty"
    warnings: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def model_name(self) -> str:
        return self.model.name

    @property
    def coefficients(self) -> dict[str, float]:
        return self.model.coefficients()

    @property
    def max_abs_residual_K(self) -> float:
        return float(np.max(np.abs(self.residuals_K)))

    @property
    def rms_residual_K(self) -> float:
        """Root mean square of the residuals (over n points, not ν)."""
        return float(np.sqrt(np.mean(self.residuals_K**2)))

    @property
    def residual_sd_K(self) -> float:
        """s = √(Σr²/ν), the scatter of the points about the curve; 0 when ν = 0 (unknown)."""
        return float(np.sqrt(np.sum(self.residuals_K**2) / self.dof)) if self.dof > 0 else 0.0

    def u_fit(self, t_C: Any) -> np.ndarray:
        """Standard uncertainty (K, k=1) of the fitted curve itself at ``t_C``."""
        t = np.atleast_1d(np.asarray(t_C, dtype=np.float64))
        r = np.asarray(self.model.temperature_to_resistance(t))
        names = list(self.model.coefficients())
        g = self.model.coefficient_sensitivities(r)[:, [names.index(k) for k in self.fitted]]
        var = np.einsum("ij,jk,ik->i", g, self.covariance, g)
        return np.sqrt(np.maximum(var, 0.0))

    def u_combined(self, t_C: Any) -> np.ndarray:
        """u_fit combined with the reference thermometer's uncertainty (K, k=1)."""
        return np.sqrt(self.u_fit(t_C) ** 2 + self.ref_u_K**2)

    def u_table(self, n: int = 11) -> dict[str, Any]:
        """u_fit and the combined uncertainty on an even grid over the requested range."""
        t = np.linspace(*self.range_C, n)
        u_fit = self.u_fit(t)
        u = np.sqrt(u_fit**2 + self.ref_u_K**2)
        return {
            "temp_C": t,
            "u_fit_K": u_fit,
            "u_K": u,
            "max_u_K": float(np.max(u)),
            "ref_u_K": self.ref_u_K,
            "covariance_from": self.covariance_from,
        }

    def to_dict(self) -> dict[str, Any]:
        """The JSON shape of ``heatlog probe fit --json``."""
        return {
            "model": self.model_name,
            "coefficients": self.coefficients,
            "fitted": list(self.fitted),
            "valid_range_C": [self.model.t_min_C, self.model.t_max_C],
            "n_points": int(self.temp_C.size),
            "dof": self.dof,
            "temp_C": self.temp_C,
            "resistance_ohm": self.resistance_ohm,
            "residuals_K": self.residuals_K,
            "max_abs_residual_K": self.max_abs_residual_K,
            "rms_residual_K": self.rms_residual_K,
            "residual_sd_K": self.residual_sd_K,
            "covariance": self.covariance,
            "u_fit_K": self.u_table(),
            "warnings": list(self.warnings),
            "notes": list(self.notes),
        }


def _check_points(
    temp_C: Any, resistance_ohm: Any, model: str, n_needed: int, what_fitted: str
) -> tuple[np.ndarray, np.ndarray]:
    t = np.atleast_1d(np.asarray(temp_C, dtype=np.float64))
    r = np.atleast_1d(np.asarray(resistance_ohm, dtype=np.float64))
    if t.ndim != 1 or t.shape != r.shape:
        raise CalibrationError(
            f"calibration points: temperatures and resistances must be two equal-length lists, "
            f"got {t.size} and {r.size}"
        )
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(r))):
        raise CalibrationError("calibration points must be finite numbers (no NaN or inf)")
    if t.size < n_needed:
        raise CalibrationError(
            f"need at least {n_needed} calibration points for {model}, got {t.size} "
            f"({what_fitted} to fit); add points spread over the range you will measure"
        )
    if np.any(r <= 0):
        bad = float(r[np.argmax(r <= 0)])
        raise CalibrationError(
            f"calibration resistance must be positive, got {bad:g} Ω; check the column order"
        )
    lo, hi = THERMISTOR_LIMITS_C if MODEL_KINDS[model] == "thermistor" else IEC_RANGE_C
    outside = (t < lo) | (t > hi)
    if np.any(outside):
        bad = float(t[np.argmax(outside)])
        raise CalibrationError(
            f"calibration point at {bad:g} °C is outside {lo:g}..{hi:g} °C, where {model} applies"
        )
    order = np.argsort(t, kind="stable")
    t, r = t[order], r[order]
    dup_t = np.flatnonzero(np.diff(t) == 0)
    if dup_t.size:
        raise CalibrationError(
            f"duplicate calibration points at {t[dup_t[0]]:g} °C; average repeated readings at "
            "one temperature into a single point"
        )
    falling = MODEL_KINDS[model] == "thermistor"
    step = np.diff(r)
    bad_step = step >= 0 if falling else step <= 0
    if np.any(bad_step):
        i = int(np.argmax(bad_step)) + 1
        trend = "fall (NTC thermistor)" if falling else "rise (platinum RTD)"
        raise CalibrationError(
            f"resistance must {trend} as temperature rises, but {r[i]:g} Ω at {t[i]:g} °C "
            f"follows {r[i - 1]:g} Ω at {t[i - 1]:g} °C; check for a swapped column or a bad point"
        )
    return t, r


def _covariance(
    jac: np.ndarray, residuals: np.ndarray, dof: int, ref_u_K: float, fitted: tuple[str, ...]
) -> tuple[np.ndarray, str]:
    with np.errstate(over="ignore"):
        scale = np.linalg.norm(jac, axis=0)
    if not np.all(np.isfinite(scale)) or np.any(scale == 0):
        raise CalibrationError(
            f"the points do not determine {', '.join(fitted)}; spread them over the range of use"
        )
    js = jac / scale
    singular = np.linalg.svd(js, compute_uv=False)
    # Below 1e-8 the condition number of JᵀJ passes 1e16: its inverse has no correct digit left
    # in float64, so neither coefficients nor covariance would mean anything.
    if singular[-1] < 1e-8 * singular[0]:
        raise CalibrationError(
            f"the points barely determine {', '.join(fitted)} (the fit is ill-conditioned); "
            "spread them over the range of use"
        )
    inv = np.linalg.pinv(js.T @ js) / np.outer(scale, scale)
    if dof > 0:
        return inv * float(np.sum(residuals**2) / dof), "residuals"
    return inv * ref_u_K**2, "reference uncertainty"


def _weighted_lstsq(design: np.ndarray, target: np.ndarray, weight: np.ndarray) -> np.ndarray:
    a = design * weight[:, None]
    scale = np.linalg.norm(a, axis=0)
    scale[scale == 0] = 1.0
    sol, *_ = np.linalg.lstsq(a / scale, target * weight, rcond=None)
    return sol / scale


def _fit_steinhart_hart(t: np.ndarray, r: np.ndarray, four: bool) -> dict[str, float]:
    x = np.log(r)
    t_k = t + ZERO_CELSIUS_K
    cols = [np.ones_like(x), x, x**3] + ([x**2] if four else [])
    p = _weighted_lstsq(np.column_stack(cols), 1.0 / t_k, t_k**2)
    names = _FITTED["steinhart-hart-4" if four else "steinhart-hart"]
    return dict(zip(names, (float(v) for v in p), strict=True))


def _cvd_design(t: np.ndarray, with_c: bool) -> np.ndarray:
    cols = [t, t * t] + ([np.where(t < 0, (t - 100.0) * t**3, 0.0)] if with_c else [])
    return np.column_stack(cols)


def _fit_cvd(
    t: np.ndarray, r: np.ndarray, r0_fixed: float | None, with_c: bool
) -> dict[str, float]:
    # 1/(dR/dt) of the IEC curve (per unit R0) turns resistance residuals into kelvin.
    weight = 1.0 / (IEC_A + 2.0 * IEC_B * t)
    tail = _cvd_design(t, with_c)
    if r0_fixed is None:
        p = _weighted_lstsq(np.column_stack([np.ones_like(t), tail]), r, weight)
        r0 = float(p[0])
        abc = p[1:] / r0
    else:
        r0 = r0_fixed
        abc = _weighted_lstsq(tail, r / r0 - 1.0, weight)
    out = {"R0": r0, "A": float(abc[0]), "B": float(abc[1])}
    if with_c:
        out["C"] = float(abc[2])
    return out


def _fit_beta(t: np.ndarray, r: np.ndarray, t25_C: float) -> dict[str, float]:
    inv_t = 1.0 / (t + ZERO_CELSIUS_K)
    inv_t25 = 1.0 / (t25_C + ZERO_CELSIUS_K)
    design = np.column_stack([np.ones_like(t), inv_t - inv_t25])
    (ln_r25, beta0), *_ = np.linalg.lstsq(design, np.log(r), rcond=None)
    if not beta0 > 0:
        raise CalibrationError("beta fit: the points do not fall like an NTC thermistor")

    def residual_K(p: np.ndarray) -> np.ndarray:
        model_inv_t = inv_t25 + (np.log(r) - p[0]) / p[1]
        return 1.0 / model_inv_t - (t + ZERO_CELSIUS_K)

    # Wild points can send trial steps to overflow; such a fit ends in the error below.
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        try:
            sol = least_squares(
                residual_K, x0=[ln_r25, beta0], x_scale=[1.0, abs(beta0)], method="lm"
            )
        except ValueError as exc:
            raise CalibrationError(f"beta fit failed ({exc}); check the points") from None
    if not (sol.success and np.all(np.isfinite(sol.x)) and sol.x[1] > 0):
        raise CalibrationError(f"beta fit did not converge ({sol.message}); check the points")
    return {"R25": float(np.exp(sol.x[0])), "beta": float(sol.x[1])}


def fit_resistance(
    temp_C: Any,
    resistance_ohm: Any,
    model: str,
    *,
    ref_u_K: float = 0.0,
    range_C: tuple[float, float] | None = None,
    r0_ohm: float | None = None,
    t25_C: float = 25.0,
) -> CalibrationFit:
    """Fit ``model`` ("steinhart-hart", "steinhart-hart-4", "beta", "callendar-van-dusen").

    ``ref_u_K`` is the reference thermometer's standard uncertainty (k=1); ``range_C`` the range
    the probe will be used over (default: the span of the points); ``r0_ohm`` holds R0 of a
    Callendar–Van Dusen fit fixed; ``t25_C`` is the β model's reference temperature.
    """
    if model not in MODEL_NAMES:
        raise CalibrationError(
            f"unknown probe model {model!r}; use one of {', '.join(MODEL_NAMES)}"
        )
    if not (np.isfinite(ref_u_K) and ref_u_K >= 0):
        raise CalibrationError(f"reference uncertainty must be ≥ 0 K, got {ref_u_K}")
    notes: list[str] = []
    fixed_extra: dict[str, float] = {}
    if model == "callendar-van-dusen":
        if r0_ohm is not None and not r0_ohm > 0:
            raise CalibrationError(f"fixed R0 must be a positive resistance, got {r0_ohm}")
        coldest = float(np.min(np.asarray(temp_C, dtype=np.float64), initial=0.0))
        with_c = coldest <= C_FIT_BELOW_C
        fitted = tuple(k for k in ("R0", "A", "B", "C") if (k != "R0" or r0_ohm is None))
        fitted = fitted if with_c else tuple(k for k in fitted if k != "C")
    else:
        fitted = _FITTED[model]
    t, r = _check_points(temp_C, resistance_ohm, model, len(fitted), ", ".join(fitted))

    lo, hi = (
        (float(t[0]), float(t[-1])) if range_C is None else (float(range_C[0]), float(range_C[1]))
    )
    if not lo < hi:
        raise CalibrationError(f"range must run from low to high, got {lo:g}..{hi:g} °C")
    warnings: list[str] = []
    tol = 0.05  # K: a bath point within this of a range end counts as covering it
    if t[0] > lo + tol or t[-1] < hi - tol:
        warnings.append(
            f"the points span {t[0]:g}..{t[-1]:g} °C but the range asked for is {lo:g}..{hi:g} °C: "
            "the curve is extrapolated outside the points; add points at the range ends"
        )
    valid = (min(lo, float(t[0])), max(hi, float(t[-1])))
    limits = THERMISTOR_LIMITS_C if MODEL_KINDS[model] == "thermistor" else IEC_RANGE_C
    if valid[0] < limits[0] or valid[1] > limits[1]:
        raise CalibrationError(
            f"range {valid[0]:g}..{valid[1]:g} °C is outside {limits[0]:g}..{limits[1]:g} °C, "
            f"where {model} applies"
        )

    if model in ("steinhart-hart", "steinhart-hart-4"):
        coeffs = _fit_steinhart_hart(t, r, four=model == "steinhart-hart-4")
    elif model == "beta":
        coeffs = _fit_beta(t, r, t25_C)
        fixed_extra["T25_C"] = t25_C
    else:
        coeffs = _fit_cvd(t, r, r0_ohm, with_c)
        if r0_ohm is not None:
            notes.append(f"R0 held at {r0_ohm:g} Ω as stated")
        if not with_c:
            coeffs["C"] = IEC_C
            why = (
                "no points below 0 °C"
                if coldest >= 0
                else f"no point at or below {C_FIT_BELOW_C:g} °C, where its term reaches ~1 mK"
            )
            notes.append(
                f"C not fitted ({why}): held at the IEC 60751 value {IEC_C:g}; "
                "it only acts below 0 °C"
            )
            if lo < 0:
                warnings.append(
                    "the range reaches below 0 °C but no point does: the C term there is the "
                    "IEC 60751 value, not this probe's"
                )
    fit_model = build_model(model, coeffs, valid, **fixed_extra)

    residuals = np.asarray(fit_model.resistance_to_temperature(r)) - t
    dof = int(t.size - len(fitted))
    names = list(fit_model.coefficients())
    jac = fit_model.coefficient_sensitivities(r)[:, [names.index(k) for k in fitted]]
    cov, source = _covariance(jac, residuals, dof, ref_u_K, fitted)
    if dof == 0:
        warnings.append(
            f"{t.size} points for {len(fitted)} coefficients leave no degrees of freedom: the "
            "curve passes through every point and its scatter cannot be judged; the curve's "
            "uncertainty comes from the reference uncertainty alone; add points"
        )
    return CalibrationFit(
        model=fit_model,
        fitted=fitted,
        covariance=cov,
        temp_C=t,
        resistance_ohm=r,
        residuals_K=residuals,
        dof=dof,
        ref_u_K=float(ref_u_K),
        range_C=(lo, hi),
        covariance_from=source,
        warnings=tuple(warnings),
        notes=tuple(notes),
    )


def fit_counts(
    temp_C: Any, counts: Any, chain: Chain, model: str, **options: Any
) -> CalibrationFit:
    """Fit from converter counts read through ``chain`` (see :func:`fit_resistance`)."""
    resistance = np.atleast_1d(
        np.asarray(chain.to_resistance(np.asarray(counts, dtype=np.float64)))
    )
    return fit_resistance(temp_C, resistance, model, **options)
