"""The full tier: one design or many -> steady state at the corners, transients, every check,
parts list and cost. ``assess`` and ``assess_many`` are the public entry points."""

from optimiser.assessment.full import Assessment, assess, assess_many

__all__ = ["Assessment", "assess", "assess_many"]
