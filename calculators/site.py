"""Observing sites: the typical conditions of a place, and how they fill calculators' params.

A site states what every request would otherwise repeat: the seeing, the sky's brightness, the night's
temperature and humidity. :func:`fill_params` gives each calculator that has a param of the matching
name the site's value, unless the request states that param itself (explicit params win). The match
is by param name, so a third-party calculator with a param called ``seeing_fwhm_arcsec`` or
``ambient_temperature_c`` is filled too.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from pydantic import BaseModel, Field

from calculators.schemas import Name, Strict

#: Site field -> the calculator param names that mean the same quantity.
PARAM_NAMES: dict[str, tuple[str, ...]] = {
    "latitude_deg": ("latitude_deg",),
    "elevation_m": ("elevation_m",),
    "seeing_fwhm_arcsec": ("seeing_fwhm_arcsec",),
    "sky_brightness_mag_arcsec2": ("sky_brightness_mag_arcsec2",),
    "night_temperature_c": ("ambient_temperature_c", "ambient_c", "night_temperature_c"),
    "relative_humidity_percent": ("relative_humidity_percent",),
}


class Site(Strict):
    """Where a rig is used, by its typical night (all but the name optional)."""

    name: Name
    latitude_deg: float | None = Field(default=None, ge=-90, le=90, description="Geographic latitude, north positive.")
    elevation_m: float | None = Field(default=None, ge=-500, le=9000, description="Height above sea level.")
    seeing_fwhm_arcsec: float | None = Field(
        default=None, gt=0, le=20, description="Typical FWHM of a star image through the air."
    )
    sky_brightness_mag_arcsec2: float | None = Field(
        default=None, ge=10, le=25, description="Typical zenith sky brightness (mag/arcsec²; about 18 in a "
        "city, 19.5-20 suburban, 21.5-22 at a dark site: common practice).",
    )
    night_temperature_c: float | None = Field(
        default=None, ge=-40, le=50, description="Typical air temperature during an observing night."
    )
    relative_humidity_percent: float | None = Field(
        default=None, gt=0, le=100, description="Typical relative humidity during an observing night."
    )

    def conditions(self) -> dict[str, float]:
        """The stated conditions, by site field."""
        return {f: getattr(self, f) for f in PARAM_NAMES if getattr(self, f) is not None}


class SiteUsed(BaseModel):
    """The site a comparison used, and which params it filled."""

    id: int | None = Field(description="Stored site id, when the site was given by id.")
    name: str
    values: dict[str, float] = Field(
        description="The site's conditions as used (after any overrides), by site field."
    )
    filled: dict[str, dict[str, float]] = Field(
        description="Params the site filled, by calculator; params the request stated are not here."
    )


def fill_params(
    calculators: Mapping[str, Any], params: Mapping[str, Mapping[str, Any]], values: Mapping[str, float]
) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, float]]]:
    """Params with the site's ``values`` filled in where a calculator has a param of that name and the
    request did not give it; and what was filled, by calculator."""
    out = {name: dict(given) for name, given in params.items()}
    filled: dict[str, dict[str, float]] = {}
    for name, calc in calculators.items():
        fields = calc.Params.model_fields
        given = params.get(name, {})
        for site_field, value in values.items():
            for param in PARAM_NAMES[site_field]:
                if param in fields and param not in given:
                    out.setdefault(name, {})[param] = value
                    filled.setdefault(name, {})[param] = value
    return out, filled
