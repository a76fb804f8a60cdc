"""Emission lines, the rayleigh, narrowband filters and colour (Bayer) sensors, for the exposure calculator.

**Lines** (rest wavelengths in air, nm; from memory, to the 0.1 nm that matters against filters of a
few nm): H-alpha 656.28, H-beta 486.13, [O III] 500.68 (the stronger line of the pair), [N II] 658.35,
[S II] 671.64 and 673.08 (a doublet: its stated brightness is the pair's total, split equally between
the two lines by our convention; the real ratio depends on the gas density).

**The rayleigh** (Hunten, Roach & Chamberlain 1956, J. Atmos. Terr. Phys. 8, 345): a surface of
brightness 1 R emits 10¹⁰/(4π) photons s⁻¹ m⁻² sr⁻¹ (10⁶/(4π) per cm² column). One steradian is
(648 000/π)² arcsec², so 1 R = 0.018704 photons s⁻¹ m⁻² arcsec⁻². In energy, a line of wavelength λ
carries hc/λ per photon: 1 R of H-alpha is 5.66 × 10⁻¹⁸ erg s⁻¹ cm⁻² arcsec⁻² (h and c exact in the
2019 SI).

**Filters** are top-hats: centre ``c``, full width ``w``, peak transmission ``T``. A line at λ passes
at ``T`` when ``|λ − c| ≤ w/2`` and not at all otherwise; a continuum (flat in f_ν) passes an
equivalent width ``T·w`` about ``c``.

**Colour sensors** (convention, common practice): a Bayer mosaic of 2 × 2 cells, one red, two green
and one blue pixel. A line reaches the pixels whose colour passes it, with nominal, overlapping
colour bands blue 400–520 nm, green 470–600 nm, red 570–700 nm (no one maker's curves): H-alpha,
[N II] and [S II] reach ¼ of the pixels (red), H-beta and [O III] ¾ (blue and green). A continuum
reaches every pixel in its own colour (fraction 1). Each colour is sampled on a grid of cells twice
the pixel pitch, so the colour sampling is twice the pixel scale.
"""

from __future__ import annotations

import math

import numpy as np

#: Planck constant (J s) and speed of light (m/s), exact in the 2019 SI.
PLANCK = 6.62607015e-34
LIGHT_SPEED = 299_792_458.0
#: Square arcseconds in one steradian, (648 000/π)².
ARCSEC2_PER_SR = (648_000.0 / math.pi) ** 2
#: Photons s⁻¹ m⁻² arcsec⁻² in one rayleigh: 10¹⁰/(4π) per steradian (Hunten et al. 1956).
RAYLEIGH_PHOTONS_M2_ARCSEC2 = 1e10 / (4.0 * math.pi) / ARCSEC2_PER_SR

#: Named lines: (wavelength nm, share of the stated brightness) per component.
LINES: dict[str, tuple[tuple[float, float], ...]] = {
    "H-alpha": ((656.28, 1.0),),
    "H-beta": ((486.13, 1.0),),
    "[O III]": ((500.68, 1.0),),
    "[N II]": ((658.35, 1.0),),
    "[S II]": ((671.64, 0.5), (673.08, 0.5)),
}

#: Bayer mosaic: (colour, share of the pixels, band nm) by the convention above.
BAYER = (("blue", 0.25, (400.0, 520.0)), ("green", 0.5, (470.0, 600.0)), ("red", 0.25, (570.0, 700.0)))


def line_wavelength_nm(line: str) -> float:
    """The brightness-weighted wavelength of a named line (the doublet's mean for [S II])."""
    return sum(w * share for w, share in LINES[line])


def photon_energy_j(wavelength_nm: float) -> float:
    """hc/λ in joules."""
    return PLANCK * LIGHT_SPEED / (wavelength_nm * 1e-9)


def erg_to_rayleigh(erg_s_cm2_arcsec2: float, wavelength_nm: float) -> float:
    """A line surface brightness in erg s⁻¹ cm⁻² arcsec⁻² as rayleighs, at the line's wavelength."""
    watts_m2 = erg_s_cm2_arcsec2 * 1e-7 * 1e4
    return watts_m2 / photon_energy_j(wavelength_nm) / RAYLEIGH_PHOTONS_M2_ARCSEC2


def line_passed(line: str, centre_nm, bandwidth_nm, transmission):
    """Fraction of a line's photons a top-hat filter passes (broadcasts over filter columns).

    NaN centre means no filter: everything passes (1).
    """
    centre = np.asarray(centre_nm, dtype=float)
    half = 0.5 * np.asarray(bandwidth_nm, dtype=float)
    passed = np.zeros(np.broadcast_shapes(centre.shape, half.shape))
    for wavelength, share in LINES[line]:
        passed = passed + share * (np.abs(wavelength - centre) <= half)
    return np.where(np.isnan(centre), 1.0, passed * transmission)


def bayer_fraction(line: str) -> float:
    """Share of a Bayer mosaic's pixels that see the (strongest component of the) line."""
    wavelength = max(LINES[line], key=lambda c: c[1])[0]
    return sum(share for _colour, share, (lo, hi) in BAYER if lo <= wavelength <= hi)
