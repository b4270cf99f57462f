"""Re-export of :mod:`widgetkit.formatting` (kept so ``widgetkit.widgets.numbers`` still works)."""

from ..formatting import format_uncertainty, format_value

__all__ = ["format_uncertainty", "format_value"]
