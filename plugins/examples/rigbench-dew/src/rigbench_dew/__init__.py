"""rigbench-dew: a rigbench calculator plugin for dew on the optics (see :mod:`rigbench_dew.dew`)."""

from rigbench_dew.dew import Dew, DewParams

__all__ = ["Dew", "DewParams"]
