"""Railwright: co-design of a valve amplifier's power transformer and high-voltage supply."""

from optimiser.assessment.steady_state import evaluate, evaluate_many


def optimise(spec, **settings):
    """Run the co-design search on a spec (path, dict or Spec); see
    :func:`optimiser.codesign.optimise`."""
    from optimiser.codesign.run import optimise as _optimise
    from optimiser.inputs.spec import load_spec

    return _optimise(load_spec(spec), **settings)


__all__ = ["evaluate", "evaluate_many", "optimise"]
__version__ = "0.1.0"
