"""Binning: b × b neighbouring pixels read as one (the batch column ``binning``, 1 by default).

A binned pixel is ``b`` times the pitch each way, so it sees ``b²`` times the sky's solid angle and
the image has ``⌊width_px / b⌋ × ⌊height_px / b⌋`` of them (the rows and columns a factor that does
not divide the sensor leaves over are dropped, as a camera reads them out).

Noise convention (CMOS, binning by summing the b² pixels after they are read; common practice):
each pixel's read noise R is independent, so the sum's is ``√(b²)·R = b·R``; dark current adds up to
``b²·D``; signal and sky add up to ``b²`` times a pixel's. (A CCD that bins the charge before it is
read pays R once; that is not modelled.)

The calculators that honour the factor (``sampling``, ``target_fit``, ``integration_time``) read it
through these helpers; a batch without the column (a plugin's own) is unbinned.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # the rig schema imports this module, and the batch imports the schema
    from calculators.batch import RigBatch

#: Largest binning factor a rig or an evaluation may ask for.
MAX_BINNING = 4


def binning(batch: RigBatch):
    """The binning factor of each rig (1 when the batch has no ``binning`` column)."""
    return batch.columns.get("binning", 1.0)


def binned_pixel_um(batch: RigBatch):
    """Pitch of a binned pixel, b · pixel_size_um."""
    return batch["pixel_size_um"] * binning(batch)


def binned_read_noise_e(batch: RigBatch):
    """Read noise of a binned pixel, b · R (b² pixels summed after readout)."""
    return batch["read_noise_e"] * binning(batch)


def binned_dark_current_e_per_s(batch: RigBatch):
    """Dark current of a binned pixel, b² · D."""
    return batch["dark_current_e_per_s"] * np.square(binning(batch))


def binned_pixels(count_px, factor):
    """Binned pixels along a side: ⌊n / b⌋."""
    return np.floor(np.asarray(count_px) / factor)
