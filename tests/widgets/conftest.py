"""Fixtures of the widget tests: demo sessions and a recording comm (no kernel, no browser).

Without a kernel, ipywidgets gives every widget a ``comm.DummyComm`` whose
``publish_msg`` drops the message. :func:`sent` replaces it with one that
keeps every message (data and binary buffers), which is how ipywidgets' own
tests look at what a widget sends.
"""

from __future__ import annotations

import comm
import numpy as np
import pytest

import widgetkit as wk


class Recorder:
    """Messages published by widgets: (comm_id, msg_type, data, buffers)."""

    def __init__(self):
        self.messages: list[tuple[str, str, dict, list]] = []

    def clear(self) -> None:
        self.messages.clear()

    def updates_of(self, widget) -> list[dict]:
        """The state updates sent for ``widget``."""
        return [d for cid, t, d, _ in self.messages
                if cid == widget.comm.comm_id and t == "comm_msg" and d.get("method") == "update"]

    def buffer_bytes(self, widgets=None) -> int:
        ids = None if widgets is None else {w.comm.comm_id for w in widgets}
        return sum(sum(memoryview(b).nbytes for b in (bufs or []))
                   for cid, _, _, bufs in self.messages if ids is None or cid in ids)


@pytest.fixture
def sent(monkeypatch):
    rec = Recorder()

    def publish_msg(self, msg_type, data=None, metadata=None, buffers=None, **keys):
        rec.messages.append((self.comm_id, msg_type, data or {}, list(buffers or [])))

    monkeypatch.setattr(comm.DummyComm, "publish_msg", publish_msg)
    return rec


def front_end_update(widget, **state) -> None:
    """Deliver an ``update`` message as the browser sends it (arrays as binary buffers)."""
    wire, buffers, paths = {}, [], []
    for name, value in state.items():
        if isinstance(value, np.ndarray):
            arr = np.ascontiguousarray(value)
            wire[name] = {"dtype": str(arr.dtype), "shape": list(arr.shape), "type": None}
            paths.append([name, "value"])
            buffers.append(memoryview(arr.tobytes()))
        else:
            wire[name] = value
    msg = {"content": {"data": {"method": "update", "state": wire, "buffer_paths": paths}},
           "buffers": buffers}
    widget._handle_msg(msg)


def front_end_event(mark, event: str, data) -> None:
    """Deliver a bqplot custom event (``element_click``, ``background_click``, ...)."""
    mark._handle_msg({"content": {"data": {"method": "custom",
                                           "content": {"event": event, "data": data}}},
                      "buffers": []})


class FrontEnd:
    """What the browser would send: state updates and bqplot custom events."""

    update = staticmethod(front_end_update)
    event = staticmethod(front_end_event)


@pytest.fixture
def browser_side():
    return FrontEnd()


@pytest.fixture(scope="session")
def hcl_spectrum():
    """Demo data from our own simulator: the 1-0 band of H-35Cl from the handbook constants
    in widgetkit.simulate.HANDBOOK (self-consistency use only)."""
    hcl = wk.Diatomic("1H", "35Cl")
    return wk.simulate.rovibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2780, 3020),
                                     step=0.05, seed=3, noise=0.002, lorentz_hwhm=0.2,
                                     resolution=0.5,
                                     title="test band")


@pytest.fixture
def session(hcl_spectrum):
    return wk.Session(hcl_spectrum)


@pytest.fixture
def small_spectrum():
    """Invented data (self-consistency only): three Gaussian lines with seeded noise."""
    rng = np.random.default_rng(7)
    x = np.linspace(2700.0, 3100.0, 4001)
    y = 0.02 + 1e-5 * (x - 2700.0)
    for c, a in ((2800.0, 0.5), (2900.0, 1.0), (3000.0, 0.7)):
        y = y + a * np.exp(-0.5 * ((x - c) / 1.5) ** 2)
    return wk.Spectrum(x, y + rng.normal(0.0, 0.002, x.size), y_kind="absorbance",
                       meta={"title": "three lines"})
