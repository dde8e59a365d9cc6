"""Railwright: co-design of a valve amplifier's power transformer and high-voltage supply."""

from .evaluation import evaluate, evaluate_many

__all__ = ["evaluate", "evaluate_many"]
__version__ = "0.1.0"
