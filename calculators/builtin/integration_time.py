"""Integration time: how long to reach a target signal-to-noise per pixel on an extended object.

**Photon rates.** Surface brightnesses (object and sky, params) are AB magnitudes per arcsec² in the
chosen band. The AB system is defined by ``m_AB = −2.5·log10(f_ν) − 48.60`` with f_ν in
erg s⁻¹ cm⁻² Hz⁻¹ (Oke & Gunn 1983, ApJ 266, 713), i.e. 0 mag = 3631 Jy. For a band of centre λ and
equivalent width Δλ (the integral of the filter's transmission) over which f_ν is taken as flat, the
photon rate per unit area is ``φ₀ = f_ν · Δλ / (h·λ)`` (photon energy hc/λ, dν = c·dλ/λ²): about 1000
photons s⁻¹ cm⁻² Å⁻¹ at 550 nm. For Vega-based V magnitudes, V ≈ AB to a few hundredths of a
magnitude (from memory), so V-band figures can be used as they are.

Per pixel, electrons per second from a surface of brightness μ:

    rate = φ₀ · 10^(−0.4·μ) · A_clear · τ_telescope · τ_train · QE · Ω_pixel,

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

**Binning** (the rig's ``binning`` b, 1 by default; see :mod:`calculators.binning`): every figure is
per *binned* pixel, the sum of b × b of the sensor's pixels after readout (CMOS; convention, common
practice). Object, sky and dark rates are then b² times a pixel's (the pixel's solid angle Ω is the
binned pixel scale squared), and the read noise of the sum is b·R — independent read noises add in
quadrature, √(b²·R²) (Howell 2006 §4.4 gives the CCD equation per pixel; a CCD that bins charge
before readout would pay R once, which is not modelled). Every term under the CCD equation's root
then grows as b², so the time to a given S/N per binned pixel is exactly 1/b² of the unbinned one, the
S/N of one sub-exposure b times it, and the sky-limited sub length does not change.

**Emission-line objects** (params ``line`` and ``line_surface_brightness_rayleigh``, or
``line_surface_brightness_erg_s_cm2_arcsec2``): the object is a named line of the given surface
brightness instead of a continuum (see :mod:`calculators.builtin.emission_lines` for the lines, the
rayleigh and its source). Its photon rate per m² and arcsec² is ``B[R] · 10¹⁰/(4π) / (648 000/π)²``,
times the fraction the filter passes.

**The filter** is the rig's (the train's ``filter`` element: columns ``filter_centre_nm``,
``filter_bandwidth_nm``, ``filter_peak_transmission``), else the params' ``filter_*`` values, else
none. With a filter the band is the filter's: the continuum (object and sky) passes an equivalent
width ``T·w`` about its centre, so the sky scales with the bandwidth; a line inside the passband
passes at ``T``, a line outside it gives no signal (``total_time_s`` null, with the reason). Without
a filter the continuum band is the params' ``wavelength_nm`` and ``bandwidth_nm`` and a line passes
whole.

**Colour sensors** (camera ``sensor: colour``; convention, common practice): only the fraction
``f`` of a Bayer mosaic's pixels that see the line record it (¼ for red lines, ¾ for H-beta and
[O III]; see emission_lines), so to reach the target S/N per pixel of the final image the total
time is the CCD equation's per-pixel time divided by ``f`` (``line_pixel_fraction``). A continuum
and a mono sensor have ``f = 1``.

Example: a 200 mm f/5 newtonian (70 mm obstruction, throughput 0.81) with 3.8 µm pixels (QE 0.8,
1.5 e⁻ read noise) on a 22 mag/arcsec² surface under a 21 mag/arcsec² sky, 88 nm band: about 0.15 e⁻/s
of object and 0.38 e⁻/s of sky per pixel; S/N 10 takes about 40 minutes (8 subs of 300 s), and subs
of 57 s or longer are sky-limited.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field, ValidationInfo, field_validator, model_validator

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.binning import binned_dark_current_e_per_s, binned_pixel_um, binned_read_noise_e
from calculators.builtin import emission_lines as lines
from calculators.builtin.cautions import SUN_CAUTION
from calculators.builtin.light_grasp import clear_area_mm2
from calculators.builtin.optics import effective_focal_length_mm, pixel_scale_arcsec
from calculators.schemas import Strict

#: Planck constant, J·s (exact in the SI since 2019).
PLANCK = 6.62607015e-34
#: AB zero point: f_ν of magnitude 0, W m⁻² Hz⁻¹ (10^(−48.60/2.5) erg s⁻¹ cm⁻² Hz⁻¹; Oke & Gunn 1983).
AB_ZERO_POINT_W_M2_HZ = 10 ** (-48.60 / 2.5) * 1e-3



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
    line: str | None = Field(
        default=None, description="Emission line of the object: " + ", ".join(lines.LINES)
        + "; null: a continuum object (surface_brightness_mag_arcsec2).", examples=["H-alpha"],
    )
    line_surface_brightness_rayleigh: float | None = Field(
        default=None, gt=0, le=1e9, description="The line's surface brightness in rayleighs "
        "(1 R = 10¹⁰/(4π) photons s⁻¹ m⁻² sr⁻¹; Hunten, Roach & Chamberlain 1956).",
    )
    line_surface_brightness_erg_s_cm2_arcsec2: float | None = Field(
        default=None, validate_default=True, gt=0, le=1e-3, description="The line's surface brightness in erg s⁻¹ cm⁻² "
        "arcsec⁻² (instead of rayleighs; give one of the two).",
    )
    filter_centre_nm: float | None = Field(
        default=None, ge=200, le=3000, description="Centre of a filter for rigs whose train has none.",
    )
    filter_bandwidth_nm: float | None = Field(
        default=None, validate_default=True, gt=0, le=1000, description="Full width of that filter's passband.",
    )
    filter_peak_transmission: float = Field(
        default=0.9, gt=0, le=1, description="Peak transmission of that filter (common practice for "
        "an interference filter: about 0.9).",
    )

    @field_validator("line")
    @classmethod
    def _known_line(cls, value: str | None) -> str | None:
        if value is not None and value not in lines.LINES:
            raise ValueError(f"unknown line {value[:40]!r}; known lines: {', '.join(lines.LINES)}")
        return value

    @field_validator("line_surface_brightness_erg_s_cm2_arcsec2")
    @classmethod
    def _one_brightness(cls, value: float | None, info: ValidationInfo) -> float | None:
        rayleigh = info.data.get("line_surface_brightness_rayleigh")
        if value is not None and rayleigh is not None:
            raise ValueError("give the line's surface brightness once: in rayleighs "
                             "(line_surface_brightness_rayleigh) or in erg s⁻¹ cm⁻² arcsec⁻², not both")
        given = value is not None or rayleigh is not None
        if "line" in info.data and given != (info.data["line"] is not None):
            raise ValueError("a line object needs both `line` and its surface brightness "
                             "(line_surface_brightness_rayleigh or this field)")
        return value

    @field_validator("filter_bandwidth_nm")
    @classmethod
    def _whole_filter(cls, value: float | None, info: ValidationInfo) -> float | None:
        if "filter_centre_nm" in info.data and (value is None) != (info.data["filter_centre_nm"] is None):
            raise ValueError("give filter_centre_nm and filter_bandwidth_nm together")
        return value

    @model_validator(mode="after")
    def _object_given_once(self):
        if self.line is not None and "surface_brightness_mag_arcsec2" in self.model_fields_set:
            raise ValueError("give the object either as a continuum (surface_brightness_mag_arcsec2) "
                             "or as a line (line and its surface brightness), not both")
        return self

    def line_rayleigh(self) -> float | None:
        """The line's brightness in rayleighs, whichever way it was given (None: continuum)."""
        if self.line_surface_brightness_rayleigh is not None:
            return self.line_surface_brightness_rayleigh
        if self.line_surface_brightness_erg_s_cm2_arcsec2 is not None:
            return lines.erg_to_rayleigh(self.line_surface_brightness_erg_s_cm2_arcsec2,
                                         lines.line_wavelength_nm(self.line))
        return None


def photon_rate_per_m2(magnitude, wavelength_nm: float, bandwidth_nm: float):
    """Photons s⁻¹ m⁻² from an AB magnitude over a band (flat f_ν across it)."""
    zero = AB_ZERO_POINT_W_M2_HZ * (bandwidth_nm * 1e-9) / (PLANCK * wavelength_nm * 1e-9)
    return zero * np.power(10.0, -0.4 * np.asarray(magnitude))


def ccd_total_time_s(snr, object_rate, background_rate, read_noise_e, sub_exposure_s):
    """CCD equation solved for the total time T: (S/N)²·(S + B + R²/t)/S² (Howell 2006 §4.4)."""
    return snr**2 * (object_rate + background_rate + np.square(read_noise_e) / sub_exposure_s) / np.square(object_rate)


class IntegrationTime(Calculator):
    name = "integration_time"
    version = "1.2.0"
    summary = "Per-pixel electron rates, total integration time to a target S/N, sub-exposures, sky-limited sub length."
    Params = IntegrationTimeParams
    outputs = (
        Output("object_rate_e_s", "1/s", "Object electrons per second per pixel.", nullable=True,
               label="Object signal per pixel"),
        Output("sky_rate_e_s", "1/s", "Sky electrons per second per pixel.", nullable=True,
               label="Sky signal per pixel"),
        Output("dark_rate_e_s", "1/s", "Dark-current electrons per second per pixel.", nullable=True,
               label="Dark signal per pixel"),
        Output("snr_per_sub", "", "Signal-to-noise per pixel in one sub-exposure.", nullable=True,
               label="S/N per sub-exposure"),
        Output("total_time_s", "s", "Total integration time to reach the target S/N per pixel.",
               nullable=True, label="Total integration time"),
        Output("sub_exposures", "", "Number of sub-exposures of the given length (rounded up).",
               nullable=True, label="Sub-exposures", integer=True),
        Output("sky_limited_sub_s", "s", "Shortest sub-exposure for which read noise adds at most the "
               "stated fraction to the background noise.", nullable=True,
               label="Shortest sky-limited sub-exposure"),
        Output("line_transmission", "", "Fraction of the emission line's photons the filter passes "
               "(1 without a filter; null for a continuum object).", nullable=True,
               label="Line transmission"),
        Output("line_pixel_fraction", "", "Fraction of the sensor's pixels that see the object: ¼ or "
               "¾ of a colour (Bayer) sensor's for a line, 1 otherwise.", nullable=True,
               label="Pixels seeing the line"),
    )
    sources = (
        "Howell, S. B., Handbook of CCD Astronomy, 2nd ed., Cambridge University Press 2006, §4.4: "
        "the CCD equation; Merline, W. J. & Howell, S. B., Experimental Astronomy 6, 163 (1995).",
        "Oke, J. B. & Gunn, J. E., ApJ 266, 713 (1983): AB magnitudes, m = −2.5 log f_ν − 48.60.",
        "Read noise negligible when it adds ≤ 5 % to the background noise: common practice.",
        "Hunten, D. M., Roach, F. E. & Chamberlain, J. W., J. Atmos. Terr. Phys. 8, 345 (1956): the "
        "rayleigh, 10¹⁰/(4π) photons s⁻¹ m⁻² sr⁻¹.",
        "Binned pixels summed after readout (CMOS): signal, sky and dark ×b², read noise ×b: "
        "common practice.",
        "Top-hat filter passbands and the Bayer fraction of pixels that see a line (red ¼, blue and "
        "green ¾): common practice.",
    )
    cautions = (SUN_CAUTION,)

    def compute(self, batch: RigBatch, params: IntegrationTimeParams) -> dict[str, np.ndarray]:
        scale = pixel_scale_arcsec(binned_pixel_um(batch), effective_focal_length_mm(batch))
        area_m2 = clear_area_mm2(batch["aperture_mm"], batch["obstruction_mm"]) * 1e-6
        collecting = (area_m2 * batch["telescope_throughput"] * batch["train_throughput"]
                      * batch["quantum_efficiency"] * np.square(scale))
        centre, width, peak = rig_filter(batch, params)
        filtered = ~np.isnan(centre)
        # The continuum band: the filter's equivalent width T·w about its centre, else the params'.
        band_centre = np.where(filtered, centre, params.wavelength_nm)
        band_width = np.where(filtered, width * peak, params.bandwidth_nm)
        sky = photon_rate_per_m2(params.sky_brightness_mag_arcsec2, band_centre, band_width) * collecting
        rayleigh = params.line_rayleigh()
        if rayleigh is None:
            signal = photon_rate_per_m2(params.surface_brightness_mag_arcsec2, band_centre, band_width) * collecting
            passed = np.full(np.shape(signal), np.nan)
            fraction = np.ones(np.shape(signal))
        else:
            passed = lines.line_passed(params.line, centre, width, peak)
            signal = rayleigh * lines.RAYLEIGH_PHOTONS_M2_ARCSEC2 * passed * collecting
            fraction = np.where(colour_sensor(batch), lines.bayer_fraction(params.line), 1.0)
        dark = binned_dark_current_e_per_s(batch)
        read = binned_read_noise_e(batch)
        t = params.sub_exposure_s
        with np.errstate(divide="ignore", invalid="ignore"):
            total = ccd_total_time_s(params.target_snr, signal, sky + dark, read, t) / fraction
            total = np.where(signal > 0, total, np.nan)  # no signal: no time reaches the S/N
            snr_sub = signal * t / np.sqrt((signal + sky + dark) * t + np.square(read))
            allowed = (1.0 + params.read_noise_penalty) ** 2 - 1.0
            sky_limited = np.square(read) / (allowed * (sky + dark))
        if not isinstance(batch["pixel_size_um"], float):
            # No camera (a visual rig): nothing reaches a sensor, so the line figures are null too.
            camera = np.where(np.isnan(batch["pixel_size_um"]), np.nan, 1.0)
            passed, fraction = passed * camera, fraction * camera
        return {
            "object_rate_e_s": signal,
            "sky_rate_e_s": sky,
            "dark_rate_e_s": dark,
            "snr_per_sub": snr_sub,
            "total_time_s": total,
            "sub_exposures": np.ceil(total / t),
            "sky_limited_sub_s": sky_limited,
            "line_transmission": passed,
            "line_pixel_fraction": fraction,
        }

    def null_reasons(self, batch: RigBatch, params: IntegrationTimeParams) -> dict[str, np.ndarray]:
        if params.line is None:
            return {}
        centre, width, _peak = rig_filter(batch, params)
        outside = lines.line_passed(params.line, centre, width, 1.0) == 0
        with np.errstate(invalid="ignore"):
            text = np.char.add(
                f"{params.line} ({lines.line_wavelength_nm(params.line):.2f} nm) lies outside the "
                "filter's passband (",
                np.char.add(np.char.mod("%.1f", centre - width / 2),
                            np.char.add(" to ", np.char.add(np.char.mod("%.1f", centre + width / 2),
                                                             " nm): no line signal reaches the sensor"))),
            )
        reason = np.where(outside, text, "")
        return {"total_time_s": reason, "sub_exposures": reason}


def rig_filter(batch: RigBatch, params: IntegrationTimeParams):
    """Centre, width and peak transmission of each rig's filter: the train's, else the params'
    (NaN centre: no filter)."""
    shape = batch.shape
    given = (np.nan, np.nan, 1.0) if params.filter_centre_nm is None else (
        params.filter_centre_nm, params.filter_bandwidth_nm, params.filter_peak_transmission)
    columns = batch.columns
    if "filter_centre_nm" not in columns:
        return tuple(np.full((1,) * len(shape), v, dtype=float) for v in given)
    centre, width = columns["filter_centre_nm"], columns["filter_bandwidth_nm"]
    peak = columns.get("filter_peak_transmission", np.ones_like(centre))
    own = ~np.isnan(centre)
    return (np.where(own, centre, given[0]), np.where(own, width, given[1]),
            np.where(own, np.where(np.isnan(peak), 1.0, peak), given[2]))


def colour_sensor(batch: RigBatch):
    """True for rigs whose camera has a colour (Bayer) sensor (column ``sensor``, when present)."""
    sensor = batch.columns.get("sensor")
    return False if sensor is None else np.asarray(sensor) == "colour"
