"""Progress bars of a series: ``tqdm.auto`` (a bar in notebooks, text in terminals)."""

from __future__ import annotations

__all__ = ["progress_bar"]


def progress_bar(total: int, desc: str, *, initial: int = 0, disable: bool = False):
    """A ``tqdm.auto`` bar over ``total`` spectra (usable as a context manager).

    The bar starts no monitor thread, so that the process stays single-threaded and
    worker processes can be forked (:mod:`widgetkit.series.executors`).
    """
    from tqdm.auto import tqdm

    class _Bar(tqdm):
        monitor_interval = 0

    return _Bar(total=total, initial=initial, desc=desc, unit="spectrum", disable=disable,
                dynamic_ncols=True, leave=True)
