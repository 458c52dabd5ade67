"""Brightness laws: predicted magnitude of a comet or asteroid from r, Δ and the phase angle.

- Comet total magnitude: m = M1 + 5 log10 Δ + K1 log10 r (K1 = 2.5 n for a brightness ∝ r^−n).
- Comet nuclear magnitude: m = M2 + 5 log10 Δ + K2 log10 r + β α (β in mag/deg).
- Asteroid: the H,G system of Bowell et al. (1989), *Asteroids II*, 524–556 (their eq. A4, the form
  adopted by the IAU in 1985): m = H + 5 log10(r Δ) − 2.5 log10[(1 − G) Φ1(α) + G Φ2(α)] with
  Φi = W Φi,S + (1 − W) Φi,L, W = exp(−90.56 tan²(α/2)), Φi,S = 1 − Ci sin α / (0.119 + 1.341 sin α
  − 0.754 sin² α), Φi,L = exp(−Ai tan(α/2)^Bi); A = (3.332, 1.862), B = (0.631, 1.218),
  C = (0.986, 0.238).
r and Δ in au, α in degrees.
"""

from __future__ import annotations

import numpy as np

from planner.inputs.targets import Brightness

LAW_TOTAL = "comet_total"
LAW_NUCLEAR = "comet_nuclear"
LAW_HG = "asteroid_hg"
LAW_NONE = "none"


def comet_total_mag(M1: float, K1: float, helio_dist_au: np.ndarray, obs_dist_au: np.ndarray) -> np.ndarray:
    """m = M1 + 5 log10 Δ + K1 log10 r (total, coma included)."""
    return M1 + 5.0 * np.log10(obs_dist_au) + K1 * np.log10(helio_dist_au)


def comet_nuclear_mag(
    M2: float,
    K2: float,
    phase_coeff_mag_per_deg: float,
    helio_dist_au: np.ndarray,
    obs_dist_au: np.ndarray,
    phase_angle_deg: np.ndarray,
) -> np.ndarray:
    """m = M2 + 5 log10 Δ + K2 log10 r + β α (nucleus, linear phase law)."""
    return (
        M2
        + 5.0 * np.log10(obs_dist_au)
        + K2 * np.log10(helio_dist_au)
        + phase_coeff_mag_per_deg * np.asarray(phase_angle_deg)
    )


def hg_mag(
    H: float, G: float, helio_dist_au: np.ndarray, obs_dist_au: np.ndarray, phase_angle_deg: np.ndarray
) -> np.ndarray:
    """Bowell et al. (1989) H,G apparent magnitude (eq. A4, with the small-angle blend)."""
    alpha = np.radians(np.asarray(phase_angle_deg, dtype=float))
    phi1 = _hg_phi(alpha, 3.332, 0.631, 0.986)
    phi2 = _hg_phi(alpha, 1.862, 1.218, 0.238)
    return (
        H
        + 5.0 * np.log10(np.asarray(helio_dist_au) * np.asarray(obs_dist_au))
        - 2.5 * np.log10((1.0 - G) * phi1 + G * phi2)
    )


def _hg_phi(alpha_rad: np.ndarray, a: float, b: float, c: float) -> np.ndarray:
    tan_half = np.tan(alpha_rad / 2.0)
    sin_a = np.sin(alpha_rad)
    w = np.exp(-90.56 * tan_half * tan_half)
    small = 1.0 - c * sin_a / (0.119 + 1.341 * sin_a - 0.754 * sin_a * sin_a)
    large = np.exp(-a * tan_half**b)
    return w * small + (1.0 - w) * large


def law_name(kind: str, b: Brightness) -> str:
    """Which law applies: total for comets when M1/K1 are given, else nuclear; H,G for asteroids."""
    if kind == "comet":
        if b.M1 is not None and b.K1 is not None:
            return LAW_TOTAL
        if b.M2 is not None:
            return LAW_NUCLEAR
        return LAW_NONE
    return LAW_HG if b.H is not None else LAW_NONE


def law_params(kind: str, b: Brightness) -> dict[str, float]:
    """The parameters the chosen law uses, by their trade names (M1, K1 / M2, K2, beta / H, G).

    Shown beside the predicted magnitudes so an observer can check them against the source orbit.
    """
    law = law_name(kind, b)
    if law == LAW_TOTAL:
        return {"M1": b.M1, "K1": b.K1}
    if law == LAW_NUCLEAR:
        return {"M2": b.M2, "K2": b.K2, "beta_mag_per_deg": b.phase_coeff_mag_per_deg}
    if law == LAW_HG:
        return {"H": b.H, "G": b.G}
    return {}


def format_law(law: str, params: dict[str, float]) -> str:
    """``asteroid_hg (H 14.2, G 0.15)``: the law's name and its parameters, for table headers."""
    shown = [f"{key.split('_')[0]} {value:g}" for key, value in params.items() if value is not None]
    return f"{law} ({', '.join(shown)})" if shown else law


def predicted_mag(
    kind: str, b: Brightness, helio_dist_au: np.ndarray, obs_dist_au: np.ndarray, phase_angle_deg: np.ndarray
) -> tuple[np.ndarray, str]:
    """Predicted magnitude array and the name of the law used (NaN where no law is given)."""
    law = law_name(kind, b)
    r = np.asarray(helio_dist_au, dtype=float)
    delta = np.asarray(obs_dist_au, dtype=float)
    if law == LAW_TOTAL:
        return comet_total_mag(b.M1, b.K1, r, delta), law
    if law == LAW_NUCLEAR:
        return comet_nuclear_mag(b.M2, b.K2, b.phase_coeff_mag_per_deg, r, delta, phase_angle_deg), law
    if law == LAW_HG:
        return hg_mag(b.H, b.G, r, delta, phase_angle_deg), law
    return np.full(np.broadcast(r, delta).shape, np.nan), law


def nuclear_mag(
    b: Brightness, helio_dist_au: np.ndarray, obs_dist_au: np.ndarray, phase_angle_deg: np.ndarray
) -> np.ndarray:
    """Nuclear magnitude where M2 is given, else NaN (for photometry of the nucleus)."""
    if b.M2 is None:
        return np.full(np.broadcast(np.asarray(helio_dist_au), np.asarray(obs_dist_au)).shape, np.nan)
    return comet_nuclear_mag(b.M2, b.K2, b.phase_coeff_mag_per_deg, helio_dist_au, obs_dist_au, phase_angle_deg)
