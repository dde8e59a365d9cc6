"""The search's problem definition: one spec bound to the search, composed of its parts.

:class:`CoDesign` is what :func:`optimiser.codesign.nsga.run` searches (``variables``,
``objective_names``, ``constraint_names``, ``evaluate``) and what the screen and the outputs
read. It holds no logic of its own; following a spec through it goes, in order:

1. :mod:`optimiser.codesign.options` — the spec's options resolved once into tables, and the
   derived choices (capacitor rating, resistor power class) looked up in them;
2. :mod:`optimiser.codesign.encoding` — the decision variables, rows decoded into
   :class:`~optimiser.codesign.encoding.Candidate` choices and back;
3. :mod:`optimiser.codesign.assembly` — candidates built into concrete designs, the
   transformers of a whole population designed in one vectorised call;
4. :mod:`optimiser.codesign.scoring` — designs assessed in full and priced (the tier that is
   reported), or :mod:`optimiser.codesign.screening` — the same figures estimated from arrays
   (the tier the search is steered by);
5. :mod:`optimiser.codesign.objectives` — F and G from those figures, and what each column of G
   means;

and :mod:`optimiser.codesign.run` runs the search and re-checks what it kept.
"""

from __future__ import annotations

from functools import cached_property

import numpy as np

from optimiser.codesign.assembly import Assembly
from optimiser.codesign.encoding import Encoding
from optimiser.codesign import branches, objective_table, winding
from optimiser.codesign.encoding import RECTIFIER_COLUMN
from optimiser.codesign.objectives import Objectives
from optimiser.codesign.options import Options, rectifier_heater
from optimiser.codesign.scoring import Scoring, check_names
from optimiser.inputs.spec import Spec

__all__ = ["CoDesign"]


class CoDesign:
    """One spec bound to the search: a facade over its parts (see module docstring).

    Parameters
    ----------
    spec : Spec

    Attributes
    ----------
    options : Options
    encoding : Encoding
    assembly : Assembly
    objectives : Objectives
    scoring : Scoring
    """

    #: :meth:`evaluate` gives each row the same result in any batch (see
    #: :mod:`optimiser.codesign.nsga`).
    batch_independent = True

    def __init__(self, spec: Spec):
        self.spec = spec
        self.options = o = Options(spec)
        self.encoding = Encoding(o)
        self.assembly = Assembly(o)
        self.objectives = Objectives(spec, check_names(o, self.encoding, self.assembly))
        self.scoring = Scoring(o, self.objectives)
        #: the objectives searched, in F's column order (:mod:`objective_table`)
        self.objective_names = self.objectives.names
        # the tables, under the names the screen and the outputs read
        self.node_names = o.node_names
        self.conditions = o.conditions
        self.capacitor_choice = o.capacitor_choice
        self.capacitor_values = o.capacitor_values
        self.offered_ratings = o.offered_ratings
        self.feed_options = o.feed_options
        self.core_stacks = o.core_stacks
        self._rectifier_heaters = o.rectifier_heaters
        self._resistor_classes = o.resistor_classes
        self.needs_sag_dynamics = o.sag_dynamics
        self.crest_voltage = o.crest_voltage
        self.capacitor_rating = o.capacitor_rating
        self.resistor_class = o.resistor_class
        self._resistor_power = o.resistor_power
        self.rectifier_heater = rectifier_heater
        # the encoding, the designs, the objectives and the full tier
        self.variables = self.encoding.variables
        self.choices = self.encoding.choices
        self.decode = self.encoding.decode
        self.encode = self.encoding.encode
        self.transformer_populations = self.assembly.transformer_populations
        self.designs = self.assembly.designs
        self.check_names = self.objectives.check_names
        self.constraints = self.objectives.constraints
        self.constraint_names = self.objectives.constraint_names
        self.objective_figures = self.objectives.objective_figures
        self.objective_values = self.objectives.objective_values
        self.constraint_values = self.objectives.constraint_values
        self.score = self.scoring.score
        self.parts_list = self.scoring.parts_list

    @cached_property
    def screen(self):
        """The search's screening tier (:class:`optimiser.codesign.screening.Screen`)."""
        from optimiser.codesign.screening import Screen

        return Screen(self)

    @staticmethod
    def shown(name, value) -> str:
        """An objective's search value as the progress line gives it
        (:func:`optimiser.codesign.objective_table.shown`)."""
        return objective_table.shown(name, value)

    def niche(self, X):
        """Each row's rectifier branch (:mod:`optimiser.codesign.branches`): the search keeps a
        front per branch (:class:`optimiser.codesign.nsga.NicheSurvival`)."""
        return branches.niche_of(self.spec, np.atleast_2d(X)[:, RECTIFIER_COLUMN])

    def repair(self, X):
        """Rows with the HV current rating raised to what the winding carries, by the screen
        (:func:`optimiser.codesign.winding.sized`); the search applies it to every design it
        evaluates (:class:`optimiser.codesign.nsga.RepairingEvaluator`)."""
        return winding.sized(self.screen, X)

    def thinnest(self, X):
        """Rows with the HV winding in the thinnest wire that carries its current and the
        secondary voltage raised to keep the B+ (:func:`optimiser.codesign.winding.thinnest`):
        one of the local search's moves (:mod:`optimiser.codesign.refine`)."""
        return winding.thinnest(self.screen, X)

    def topped_up(self, X, G):
        """Of screened rows, those short only of B+, with the secondary raised by the shortfall
        (:func:`optimiser.codesign.winding.topped_up`): the local search's next step after a
        move that cost a volt or two (:mod:`optimiser.codesign.refine`)."""
        return winding.topped_up(self.screen, X, G)

    def recalibrate(self, X, G_full=None):
        """Correct the screen's easing per branch on designs assessed in full
        (:meth:`optimiser.codesign.screening.Screen.recalibrate`): the search calls it halfway
        with what it holds (:func:`optimiser.codesign.nsga.run`), and :func:`optimise` again
        before the local search, giving the full assessment's constraints of the rows
        (``G_full``) it has made anyway."""
        X = np.atleast_2d(np.asarray(X, float))
        self.screen.recalibrate(X, self.evaluate_full(X)[1] if G_full is None else G_full)

    def evaluate(self, X):
        """Objectives and constraints of a population for the search: (F (B, n_obj), G (B, M)),
        from the screening tier (:mod:`optimiser.codesign.screening`). What the search keeps is
        re-assessed in full by :func:`optimiser.codesign.optimise`."""
        return self.screen.evaluate(X)

    def evaluate_full(self, X):
        """Objectives and constraints of a population from the full assessment."""
        scored = self.score(self.designs(self.decode(X)))
        return scored.F, scored.G
