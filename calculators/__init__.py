"""Pure computation for rigbench: rig schemas, unit parsing at the edge, batch calculators.

Nothing in this package imports a web framework or a database.
"""
