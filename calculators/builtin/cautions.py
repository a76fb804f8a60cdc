"""Safety cautions shared by several calculators (each calculator lists its own in ``cautions``)."""

SUN_CAUTION = (
    "Never point a telescope, finder or camera at or near the Sun without a proper full-aperture "
    "solar filter made for that purpose: it causes instant, permanent eye injury and destroys cameras."
)
