"""Railwright: co-design of a valve amplifier's power transformer and high-voltage supply."""

# before numba is first imported: a read-only install caches the compiled loops in the user's
# cache folder instead (see optimiser.formats.cache)
from optimiser.formats.cache import choose_cache_folder as _choose_cache_folder

_choose_cache_folder()

from optimiser.assessment.steady_state import evaluate, evaluate_many  # noqa: E402


def optimise(spec, **settings):
    """Run the co-design search on a spec (path, dict or Spec); see
    :func:`optimiser.codesign.optimise`."""
    from optimiser.codesign.run import optimise as _optimise
    from optimiser.inputs.spec import load_spec

    return _optimise(load_spec(spec), **settings)


__all__ = ["evaluate", "evaluate_many", "optimise"]
__version__ = "0.1.0"
