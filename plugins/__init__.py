"""Calculator registry: built-in and third-party calculators found through entry points.

Scripts use :func:`plugins.compare.compare`, re-exported here::

    from plugins import compare
    result = compare([rig_a, rig_b], calculators=["speed"], baseline=0)
"""

from plugins.compare import compare

__all__ = ["compare"]
