"""Domain errors. Each also subclasses the built-in it refines, so plain ``except ValueError`` works."""


class RigbenchError(Exception):
    """Base of every error rigbench raises on purpose; the service maps these to RFC 9457 problems."""

    status = 400
    title = "Bad request"


class CalculationError(RigbenchError, ValueError):
    """A calculator cannot compute with these inputs (e.g. prices in several currencies, no rates)."""

    status = 422
    title = "Cannot compute"
