"""Integration time: how long to reach a target signal-to-noise per pixel on an extended object.

**Photon rates.** Surface brightnesses (object and sky, params) are AB magnitudes per arcsec² in the
chosen band. The AB system is defined by ``m_AB = −2.5·log10(f_ν) − 48.60`` with f_ν in
erg s⁻¹ cm⁻² Hz⁻¹ (Oke & Gunn 1983, ApJ 266, 713), i.e. 0 mag = 3631 Jy. For a band of centre λ and
equivalent width Δλ (the integral of the filter's transmission) over which f_ν is taken as flat, the
photon rate per unit area is ``φ₀ = f_ν · Δλ / (h·λ)`` (photon energy hc/λ, dν = c·dλ/λ²): about 1000
photons s⁻¹ cm⁻² Å⁻¹ at 550 nm. For Vega-based V magnitudes, V ≈ AB to a few hundredths of a
magnitude (from memory), so V-band figures can be used as they are.

Per pixel, electrons per second from a surface of brightness μ:

    rate = φ₀ · 10^(−0.4·μ) · A_clear · τ_telescope · τ_modifier · QE · Ω_pixel,

with A_clear = π/4·(D² − d²) and Ω_pixel the pixel's solid angle in arcsec² (pixel scale squared).

**The CCD equation** (Howell, Handbook of CCD Astronomy, 2nd ed. 2006, §4.4; Merline & Howell 1995,
Experimental Astronomy 6, 163), per pixel, for n sub-exposures of length t adding to T = n·t:

    S/N = S·T / √( (S + B + D)·T + n·R² ),

S, B, D the object, sky and dark-current rates (e⁻/s), R the read noise (e⁻ rms). Setting S/N to the
target and n = T/t gives

    T = (S/N)² · (S + B + D + R²/t) / S²,

reported as ``total_time_s``; ``sub_exposures`` is T/t rounded up. (Howell's term for the noise of the
background estimate, 1 + n_pix/n_B, is taken as 1: a well-sampled background.)

**When read noise stops mattering** (a stated criterion, common practice): read noise is negligible
once it raises the noise of one sub-exposure's background by at most a fraction p (param, default
5 %): ``√(1 + R²/((B + D)·t)) ≤ 1 + p``, i.e. ``t ≥ R² / (((1 + p)² − 1)·(B + D))`` —
``sky_limited_sub_s``.

Missing camera data (quantum efficiency, read noise or dark current) give null results.

Example: a 200 mm f/5 newtonian (70 mm obstruction, throughput 0.81) with 3.8 µm pixels (QE 0.8,
1.5 e⁻ read noise) on a 22 mag/arcsec² surface under a 21 mag/arcsec² sky, 88 nm band: about 0.15 e⁻/s
of object and 0.38 e⁻/s of sky per pixel; S/N 10 takes about 40 minutes (8 subs of 300 s), and subs
of 57 s or longer are sky-limited.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.light_grasp import clear_area_mm2
from calculators.builtin.optics import effective_focal_length_mm, pixel_scale_arcsec
from calculators.schemas import Strict

#: Planck constant, J·s (exact in the SI since 2019).
PLANCK = 6.62607015e-34
#: AB zero point: f_ν of magnitude 0, W m⁻² Hz⁻¹ (10^(−48.60/2.5) erg s⁻¹ cm⁻² Hz⁻¹; Oke & Gunn 1983).
AB_ZERO_POINT_W_M2_HZ = 10 ** (-48.60 / 2.5) * 1e-3

SUN_CAUTION = (
    "Never point a telescope, finder or camera at or near the Sun without a proper full-aperture "
    "solar filter made for that purpose: it causes instant, permanent eye injury and destroys cameras."
)


class IntegrationTimeParams(Strict):
    surface_brightness_mag_arcsec2: float = Field(
        default=22.0, ge=5, le=35, description="Object's surface brightness (AB mag/arcsec² in the band)."
    )
    sky_brightness_mag_arcsec2: float = Field(
        default=21.0, ge=10, le=25, description="Sky background (AB mag/arcsec²; about 21-22 at a dark "
        "site in V: common practice)."
    )
    target_snr: float = Field(default=10.0, gt=0, le=10_000, description="Signal-to-noise wanted per pixel.")
    sub_exposure_s: float = Field(default=300.0, gt=0, le=86_400, description="Length of one sub-exposure.")
    wavelength_nm: float = Field(default=550.0, ge=200, le=3000, description="Band centre.")
    bandwidth_nm: float = Field(
        default=88.0, gt=0, le=2000, description="Equivalent width of the band (V ≈ 88 nm, from memory)."
    )
    read_noise_penalty: float = Field(
        default=0.05, gt=0, le=1, description="Fractional noise increase from read noise considered "
        "negligible (common practice: 5 %)."
    )


def photon_rate_per_m2(magnitude, wavelength_nm: float, bandwidth_nm: float):
    """Photons s⁻¹ m⁻² from an AB magnitude over a band (flat f_ν across it)."""
    zero = AB_ZERO_POINT_W_M2_HZ * (bandwidth_nm * 1e-9) / (PLANCK * wavelength_nm * 1e-9)
    return zero * np.power(10.0, -0.4 * np.asarray(magnitude))


def ccd_total_time_s(snr, object_rate, background_rate, read_noise_e, sub_exposure_s):
    """CCD equation solved for the total time T: (S/N)²·(S + B + R²/t)/S² (Howell 2006 §4.4)."""
    return snr**2 * (object_rate + background_rate + np.square(read_noise_e) / sub_exposure_s) / np.square(object_rate)


class IntegrationTime(Calculator):
    name = "integration_time"
    version = "1.0.0"
    summary = "Per-pixel electron rates, total integration time to a target S/N, sub-exposures, sky-limited sub length."
    Params = IntegrationTimeParams
    outputs = (
        Output("object_rate_e_s", "1/s", "Object electrons per second per pixel.", nullable=True),
        Output("sky_rate_e_s", "1/s", "Sky electrons per second per pixel.", nullable=True),
        Output("dark_rate_e_s", "1/s", "Dark-current electrons per second per pixel.", nullable=True),
        Output("snr_per_sub", "", "Signal-to-noise per pixel in one sub-exposure.", nullable=True),
        Output("total_time_s", "s", "Total integration time to reach the target S/N per pixel.",
               nullable=True),
        Output("sub_exposures", "", "Number of sub-exposures of the given length (rounded up).",
               nullable=True),
        Output("sky_limited_sub_s", "s", "Shortest sub-exposure for which read noise adds at most the "
               "stated fraction to the background noise.", nullable=True),
    )
    sources = (
        "Howell, S. B., Handbook of CCD Astronomy, 2nd ed., Cambridge University Press 2006, §4.4: "
        "the CCD equation; Merline, W. J. & Howell, S. B., Experimental Astronomy 6, 163 (1995).",
        "Oke, J. B. & Gunn, J. E., ApJ 266, 713 (1983): AB magnitudes, m = −2.5 log f_ν − 48.60.",
        "Read noise negligible when it adds ≤ 5 % to the background noise: common practice.",
    )
    cautions = (SUN_CAUTION,)

    def compute(self, batch: RigBatch, params: IntegrationTimeParams) -> dict[str, np.ndarray]:
        scale = pixel_scale_arcsec(batch["pixel_size_um"], effective_focal_length_mm(batch))
        area_m2 = clear_area_mm2(batch["aperture_mm"], batch["obstruction_mm"]) * 1e-6
        collecting = (area_m2 * batch["telescope_throughput"] * batch["modifier_throughput"]
                      * batch["quantum_efficiency"] * np.square(scale))
        per_m2 = photon_rate_per_m2(
            [params.surface_brightness_mag_arcsec2, params.sky_brightness_mag_arcsec2],
            params.wavelength_nm, params.bandwidth_nm,
        )
        signal = per_m2[0] * collecting
        sky = per_m2[1] * collecting
        dark = batch["dark_current_e_per_s"]
        read = batch["read_noise_e"]
        t = params.sub_exposure_s
        total = ccd_total_time_s(params.target_snr, signal, sky + dark, read, t)
        snr_sub = signal * t / np.sqrt((signal + sky + dark) * t + np.square(read))
        allowed = (1.0 + params.read_noise_penalty) ** 2 - 1.0
        with np.errstate(divide="ignore", invalid="ignore"):
            sky_limited = np.square(read) / (allowed * (sky + dark))
        return {
            "object_rate_e_s": signal,
            "sky_rate_e_s": sky,
            "dark_rate_e_s": dark,
            "snr_per_sub": snr_sub,
            "total_time_s": total,
            "sub_exposures": np.ceil(total / t),
            "sky_limited_sub_s": sky_limited,
        }
