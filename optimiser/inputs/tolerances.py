"""The tolerance model: how real builds of one design differ from it (``tolerances:``).

A design file and a spec may both give a ``tolerances:`` block; every quantity has a default,
and each default says where it comes from. A quantity's spread is a distribution over a band
around its nominal value: ``uniform`` over the band, or ``normal`` with the band at ``sigmas``
standard deviations and truncated to the band (so no sampled build lies outside it).

Where a band is left out it is the design's own corner band (``conditions:``): the mains band
``mains_low``/``mains_high``, the winder's ``transformer_tolerance``, each capacitor's series
tolerance (or ``capacitor_minus``/``capacitor_plus``). With those defaults every sampled build
lies inside the corners the full assessment already checks.

The search's ``robustness:`` block (spec only) asks for the designs it keeps to be re-assessed
by sampling builds.
"""

from __future__ import annotations

from typing import Annotated, Literal, Optional

from pydantic import Field, model_validator

from optimiser.formats.schema import Fraction, Strict, Temperature

__all__ = ["Spread", "AmbientRange", "Tolerances", "Robustness"]


class Spread(Strict):
    """The spread of one quantity between builds, as a fraction of its nominal value.

    Attributes
    ----------
    distribution : {"uniform", "normal"}
        ``normal`` is truncated to the band, with the band edge at ``sigmas`` deviations.
    minus, plus : float or None
        Band below and above nominal [-]; None: the design's own corner band.
    sigmas : float
        For ``normal``: the band edge in standard deviations.
    """

    distribution: Literal["uniform", "normal"] = "normal"
    minus: Optional[Annotated[Fraction, Field(ge=0, lt=1)]] = None
    plus: Optional[Annotated[Fraction, Field(ge=0, lt=2)]] = None
    sigmas: float = Field(default=3.0, gt=0, le=10)


class AmbientRange(Strict):
    """Ambient temperature between builds (where each amplifier lives), uniform over the range.

    ``max`` None: the design's ``conditions.ambient`` (the worst case it is checked at).
    """

    min: Temperature = 20.0
    max: Optional[Temperature] = None

    @model_validator(mode="after")
    def _order(self):
        if self.max is not None and self.max < self.min:
            raise ValueError("ambient.max must not be below ambient.min")
        return self


def _normal(**kw):
    return Spread(distribution="normal", **kw)


class Tolerances(Strict):
    """Spreads of every toleranced quantity of a build.

    Defaults (each marked):

    - ``mains``: normal, band = the design's mains band at 3 sigma. Common practice, no
      source: mains sits near nominal most of the time; its band edges are rare.
    - ``secondary_voltage``: normal, band = the winder's tolerance at 3 sigma (common practice,
      no source: a winder's stated tolerance is a limit, most units land near target).
    - ``winding_resistance``: normal, +/-10 % at 3 sigma (wire gauge and layer build spread;
      from memory — verify with your winder).
    - ``capacitors``: uniform over each series' band (makers state only the band; common
      practice, no source).
    - ``perveance``: normal, +/-25 % at 3 sigma between samples of one valve type (forward
      drop of rectifier valves differs by tens of per cent between makers and samples; from
      memory — verify by measuring your stock).
    - ``resistors``: uniform, +/-5 % (the catalogue's power-resistor classes are 1-5 %; 5 %
      is the loosest; common practice, no source).
    - ``ambient``: uniform from 20 degC to the design's ambient (common practice, no source).
    """

    mains: Spread = _normal()
    secondary_voltage: Spread = _normal()
    winding_resistance: Spread = _normal(minus=0.10, plus=0.10)
    capacitors: Spread = Spread(distribution="uniform")
    perveance: Spread = _normal(minus=0.25, plus=0.25)
    resistors: Spread = Spread(distribution="uniform", minus=0.05, plus=0.05)
    ambient: AmbientRange = AmbientRange()


class Robustness(Strict):
    """The search's re-assessment of what it keeps by sampled builds (spec ``robustness:``).

    Attributes
    ----------
    samples : int
        Builds sampled per kept design.
    min_yield : float
        Designs whose fraction of passing builds is below this are reported as such. [-]
    seed : int
        Seed of the sampled builds (the same for every design, so designs are compared on
        the same draws).
    """

    samples: int = Field(default=200, ge=10, le=100_000)
    min_yield: Annotated[Fraction, Field(ge=0, le=1)] = 0.99
    seed: int = Field(default=1, ge=0)
