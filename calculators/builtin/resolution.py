"""Resolution: Dawes and Rayleigh limits, the Airy disc at the focal plane, seeing or diffraction limited.

Formulas (units in the names; D the aperture, λ the wavelength, N the effective focal ratio):

* Dawes limit ``θ_D = 116″ / D[mm]`` — Dawes's empirical separation for two equal stars of about
  6th magnitude, 4.56″ for a one-inch aperture (Dawes, Memoirs of the RAS 35, 1867; the 4.56″ figure
  is from memory). It is wavelength-free because it was measured by eye in white light.
* Rayleigh limit ``θ_R = 1.21967 · λ / D`` [rad], where 1.21967 = j₁,₁/π and j₁,₁ = 3.83171 is the
  first zero of the Bessel function J₁: the first dark ring of the Airy pattern of a circular aperture
  (Born & Wolf, Principles of Optics, 7th ed., §8.5.2). Converted to arcsec with 206 264.806″/rad.
* Airy disc diameter at the focal plane ``d = 2 · 1.21967 · λ · N = 2.43934 · λ · N`` [µm with λ in µm]
  (the same ring, projected through the focal length). Also given in pixels, ``d / p``.
* Seeing- or diffraction-limited: the rig is called ``seeing-limited`` when the seeing FWHM (param) is
  larger than the Rayleigh limit, ``diffraction-limited`` otherwise — a stated criterion (common
  practice, no single published source).

A central obstruction moves the first dark ring slightly inwards and puts more light into the rings;
the figures here are those of the unobstructed aperture, as usually quoted.

Example: a 100 mm aperture at 550 nm has θ_R = 1.3837″ and θ_D = 1.16″; at f/8 the Airy disc is
10.733 µm across.
"""

from __future__ import annotations

import numpy as np
from pydantic import Field

from calculators.base import Calculator, Output
from calculators.batch import RigBatch
from calculators.builtin.cautions import SUN_CAUTION
from calculators.builtin.optics import ARCSEC_PER_RAD, RAYLEIGH_FACTOR, effective_focal_ratio
from calculators.schemas import Strict

#: Dawes's empirical constant, arcsec × mm (4.56″ × 25.4 mm ≈ 115.8, rounded to 116 as usually quoted).
DAWES_ARCSEC_MM = 116.0


class ResolutionParams(Strict):
    wavelength_nm: float = Field(
        default=550.0, ge=200, le=3000, description="Wavelength for the Rayleigh limit and Airy disc."
    )
    seeing_fwhm_arcsec: float = Field(
        default=2.0, gt=0, le=20, description="Site seeing, full width at half maximum of a star."
    )


def dawes_arcsec(aperture_mm):
    """Dawes limit 116″/D[mm]."""
    return DAWES_ARCSEC_MM / np.asarray(aperture_mm)


def rayleigh_arcsec(aperture_mm, wavelength_nm):
    """Rayleigh limit 1.21967·λ/D, in arcsec."""
    return RAYLEIGH_FACTOR * (wavelength_nm * 1e-6) / np.asarray(aperture_mm) * ARCSEC_PER_RAD


def airy_diameter_um(focal_ratio, wavelength_nm):
    """Diameter of the Airy disc (to the first dark ring) at the focal plane, 2.43934·λ·N, in µm."""
    return 2.0 * RAYLEIGH_FACTOR * (wavelength_nm * 1e-3) * np.asarray(focal_ratio)


class Resolution(Calculator):
    name = "resolution"
    version = "1.0.0"
    summary = "Dawes and Rayleigh limits, Airy disc size in µm and pixels, seeing- or diffraction-limited."
    Params = ResolutionParams
    outputs = (
        Output("dawes_arcsec", "arcsec", "Dawes limit 116″/D (empirical, wavelength-free).",
               label="Dawes limit"),
        Output("rayleigh_arcsec", "arcsec", "Rayleigh limit 1.21967·λ/D at the wavelength param.",
               label="Rayleigh limit"),
        Output("airy_diameter_arcsec", "arcsec", "Angular diameter of the Airy disc, 2 × Rayleigh.",
               label="Airy disc"),
        Output("airy_diameter_um", "um", "Airy disc diameter at the focal plane, 2.43934·λ·N.",
               label="Airy disc at focus"),
        Output("airy_diameter_px", "pixel", "Airy disc diameter in camera pixels.",
               label="Airy disc in pixels"),
        Output("seeing_to_rayleigh", "", "Seeing FWHM divided by the Rayleigh limit.",
               label="Seeing over Rayleigh limit"),
        Output(
            "limited_by", "", "'seeing-limited' when the seeing FWHM exceeds the Rayleigh limit, "
            "else 'diffraction-limited'.", kind="text", label="Limited by",
        ),
    )
    sources = (
        "Dawes, W. R., Memoirs of the Royal Astronomical Society 35 (1867): 4.56″ per inch of "
        "aperture (empirical; figure from memory).",
        "Born, M. & Wolf, E., Principles of Optics, 7th ed., Cambridge University Press 1999, §8.5.2: "
        "Airy pattern, first dark ring at 1.21967·λ/D.",
        "Seeing-limited when seeing FWHM > Rayleigh limit: common practice.",
    )
    cautions = (SUN_CAUTION,)

    def compute(self, batch: RigBatch, params: ResolutionParams) -> dict[str, np.ndarray]:
        aperture = batch["aperture_mm"]
        rayleigh = rayleigh_arcsec(aperture, params.wavelength_nm)
        airy_um = airy_diameter_um(effective_focal_ratio(batch), params.wavelength_nm)
        ratio = params.seeing_fwhm_arcsec / rayleigh
        return {
            "dawes_arcsec": dawes_arcsec(aperture),
            "rayleigh_arcsec": rayleigh,
            "airy_diameter_arcsec": 2.0 * rayleigh,
            "airy_diameter_um": airy_um,
            "airy_diameter_px": airy_um / batch["pixel_size_um"],
            "seeing_to_rayleigh": ratio,
            "limited_by": np.where(ratio > 1.0, "seeing-limited", "diffraction-limited"),
        }
