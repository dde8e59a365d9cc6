"""The search: a spec turned into decision variables, the screening tier that scores a
population, pymoo's NSGA-II, and the full re-check of what it keeps. ``optimise`` is the entry
point."""

from optimiser.codesign.run import optimise

__all__ = ["optimise"]
