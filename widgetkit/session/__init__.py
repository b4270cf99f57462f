"""The session: source data plus ordered steps, replayable and verifiable.

See :class:`Session`. Step kinds are registered in ``kinds_*`` modules; adding
one is a small class (see :mod:`widgetkit.session.steps`).
"""

from . import (  # noqa: F401  (register the step kinds)
    kinds_analysis,
    kinds_bandmodel,
    kinds_basic,
    kinds_lines,
    kinds_locks,
    kinds_peaks,
    kinds_raman,
)
from .recipe import Recipe, RecipeRun, RecipeStep
from .session import Session, SessionEvent
from .steps import STEP_KINDS, State, Step, StepKind, register_step
from .verify import VerifyReport

__all__ = ["Session", "SessionEvent", "Step", "State", "StepKind", "STEP_KINDS", "register_step",
           "VerifyReport", "Recipe", "RecipeStep", "RecipeRun"]
