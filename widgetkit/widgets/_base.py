"""The base of every panel: one session, one subscription, one status line.

A panel holds view state only (zoom, selection, control values not yet
applied). Every analysis action calls a session method through
:meth:`Panel._call`, which shows a :class:`~widgetkit.errors.WidgetkitError`
in the status line instead of raising it. The session then notifies every
subscribed panel (``Session.subscribe``, the one notification path, whose
re-entrancy guard lives in the session) and each panel re-renders from the
session in :meth:`Panel.render`.

Busy indicator: while an action runs (:meth:`Panel.working`, used by every
:meth:`Panel._call`), the status line shows what is being done with a turning
mark, the panel's controls are disabled and the pointer shows progress. It is
put up before the work starts, so anything that takes noticeable time (over
half a second: fits, assignments, reading, reopening, verifying) shows it; a
quick action replaces it with its result at once. A long computation may call
the ``update(text)`` that :meth:`Panel.working` yields to show its progress.

Status lines never go stale: after a change made elsewhere (another panel, a
notebook cell), a step back or forward, an undo or a reopened session, every
panel's status line says what the session now shows.
"""

from __future__ import annotations

import html
import os
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

import ipywidgets as ipw

from ..errors import SessionStateError, WidgetkitError
from ..formatting import plain_message, plural, summary_text

__all__ = ["Panel", "PlotPanel", "reverse_by_default", "status_html", "row", "BUSY_CSS"]

#: spinner and progress cursor of the busy indicator (one style element, in every busy line)
BUSY_CSS = ("<style>@keyframes wk-spin{to{transform:rotate(360deg)}}"
            ".wk-spinner{display:inline-block;animation:wk-spin 1s linear infinite;"
            "margin-right:0.4em}.wk-panel.wk-busy,.wk-panel.wk-busy *{cursor:progress}</style>")


def row(*children: ipw.Widget, **layout) -> ipw.HBox:
    """A row of controls that wraps onto a second line when the panel is narrow (a file
    browser beside the notebook, a small window) instead of clipping its last controls."""
    return ipw.HBox(list(children), layout=ipw.Layout(flex_flow="row wrap",
                                                      align_items="center", **layout))

_STATUS_STYLE = {
    "ok": "color:#1e6b30",
    "error": "color:#b03a2e;font-weight:bold",
    "info": "color:#555",
    "busy": "color:#1f4e79;font-style:italic",
    "warning": "color:#8a5300;font-weight:bold",
}


def status_html(kind: str, text: str) -> str:
    """The status line's HTML: ``kind`` in ok, error, info, busy (with a turning mark),
    warning."""
    mark = (BUSY_CSS + '<span class="wk-spinner" aria-hidden="true">◐</span>'
            if kind == "busy" else "")
    return (f'<div class="wk-status wk-status-{kind}" style="{_STATUS_STYLE[kind]}">'
            f"{mark}{html.escape(text)}</div>")


class Panel(ipw.VBox):
    """Base class of the panels; subclasses implement ``_build`` and ``render``.

    Parameters
    ----------
    session : widgetkit.Session or None
        The session to show. ``None`` shows an empty panel (load data from the
        Spectrum panel or assign ``panel.session`` later).
    owner : object, optional
        The app holding this panel; a panel that opens a new session (load,
        reopen) hands it to ``owner.use_session`` so every panel switches.
    read_only : bool, default False
        Disable every control that changes the analysis (for a walk-through
        in a meeting, e.g. under Voila); zoom, selection and stepping through
        the record stay available.
    """

    title = "Panel"

    def __init__(self, session=None, *, owner=None, read_only: bool = False, **kwargs):
        super().__init__(**kwargs)
        self.read_only = bool(read_only)
        self.add_class("wk-panel")
        self._session = None
        self._owner = owner
        self._action_widgets: list[ipw.Widget] = []
        self._file_widgets: list[ipw.Widget] = []
        #: the error of the last action (None when it succeeded)
        self.last_error: Exception | None = None
        #: True while an action of this panel runs (:meth:`working`)
        self.busy = False
        self.status = ipw.HTML(status_html("info", ""), layout=ipw.Layout(min_height="1.6em"))
        self.status.add_class("wk-status-line")
        self._build()
        self.session = session

    # ------------------------------------------------------------------ session binding
    @property
    def session(self):
        """The session shown (assigning another one re-subscribes and re-renders)."""
        return self._session

    @session.setter
    def session(self, new) -> None:
        old = self._session
        if old is not None:
            old.unsubscribe(self._on_session_change)
        self._session = new
        if new is not None:
            new.subscribe(self._on_session_change)
        self._render_all()
        if old is not None and new is not old:  # opened or reopened: nothing said before holds
            self.show_status("info", self._session_text(new))

    @staticmethod
    def _session_text(s) -> str:
        if s is None:
            return "no session"
        n = len(s.history)
        where = f"reopened {os.path.basename(str(s.path))}: " if getattr(s, "path", None) else ""
        return (f"{where}{plural(n, 'step')} (0–{n - 1}); showing step {s.viewing} "
                f"({s.history[s.viewing].kind})")

    def _on_session_change(self, session, event) -> None:
        # the one path by which a panel learns of a change
        self._render_all()
        if not self.busy:  # a panel's own action says how it went when it ends
            self.show_status("info", self._event_text(session, event))

    @staticmethod
    def _view_text(s) -> str:
        """Which state the session shows: the latest, or an earlier one (read-only)."""
        n, i = len(s.history), s.viewing
        if i == n - 1:
            return f"showing the latest state (step {i}, {s.history[i].kind})"
        return (f"showing the state after step {i} of {n - 1} ({s.history[i].kind}); the "
                "analysis is read-only until you press Latest in the Record panel")

    @staticmethod
    def _event_text(s, event) -> str:
        """What every panel's status line says after a change made elsewhere."""
        n = len(s.history)
        if event.kind == "view":
            return Panel._view_text(s)
        if event.kind == "undo":
            gone = f" ({event.step.kind})" if event.step is not None else ""
            return (f"undid step {n}{gone}; the latest is now step {n - 1} "
                    f"({s.history[-1].kind})")
        step = event.step
        if step is None:
            return ""
        return f"step {event.index} ({step.kind}): {summary_text(step.summary)}"

    def _render_all(self) -> None:
        earlier = self._session is not None and self._session.viewing != len(
            self._session.history) - 1
        for w in self._action_widgets:
            w.disabled = self._session is None or earlier or self.read_only or self.busy
        for w in self._file_widgets:
            w.disabled = self.read_only or self.busy
        self.render()

    def _use_session(self, new, said: str | None = None) -> None:
        """Show ``new`` in this panel (and every panel of the app); ``said`` is this panel's
        own word on it (the other panels say what the new session holds)."""
        if self._owner is not None:
            self._owner.use_session(new)
        else:
            self.session = new
        if said:
            self.show_status("ok", said)

    def close(self) -> None:
        if self._session is not None:
            self._session.unsubscribe(self._on_session_change)
        super().close()

    # ------------------------------------------------------------------ to override
    def _build(self) -> None:  # pragma: no cover - abstract
        raise NotImplementedError

    def render(self) -> None:  # pragma: no cover - abstract
        """Show the session's state (called after every session change)."""
        raise NotImplementedError

    # ------------------------------------------------------------------ helpers
    def _actions(self, *widgets: ipw.Widget) -> None:
        """Widgets that change the analysis: disabled when there is no session or the
        session shows an earlier step (read-only walk-through)."""
        self._action_widgets.extend(widgets)

    def _file_actions(self, *widgets: ipw.Widget) -> None:
        """Widgets that open or write files: disabled only in a read-only panel."""
        self._file_widgets.extend(widgets)

    def show_status(self, kind: str, text: str) -> None:
        self.status.value = status_html(kind, text)

    @contextmanager
    def working(self, text: str) -> Iterator[Callable[[str], None]]:
        """Show the busy indicator while the ``with`` block runs (see the module docstring).

        Yields ``update(text)``, which shows progress in the status line. The panel's
        controls are disabled meanwhile and restored afterwards, also when the block raises.
        Nested use (an action inside another) keeps the outer indicator.
        """
        def update(message: str) -> None:
            self.show_status("busy", message)

        if self.busy:
            yield update
            return
        self.busy = True
        self.add_class("wk-busy")
        update(text)
        for w in (*self._action_widgets, *self._file_widgets):
            w.disabled = True
        try:
            yield update
        finally:
            self.busy = False
            self.remove_class("wk-busy")
            self._render_all()

    def _call(self, what: str, fn: Callable | str, *args, ok: str | None = None,
              catch: tuple[type[BaseException], ...] = (WidgetkitError,),
              busy: str | None = None, **kwargs) -> Any:
        """Run a session method (given by name, or any callable); show its error, if any.

        The busy indicator (:meth:`working`) says ``busy`` (default ``"<what>…"``)
        while it runs. Returns the result, or None when a :class:`WidgetkitError`
        was raised (the session is then unchanged; the message is in the status
        line). File actions also pass ``catch=(WidgetkitError, OSError)`` (a missing file).
        """
        self.last_error = None
        if isinstance(fn, str):
            name, fn = fn, getattr(self._session, fn, None)
            if fn is None:
                self.last_error = SessionStateError(
                    "no session yet; load a spectrum first" if self._session is None else
                    f"this session has no method {name}(); update widgetkit")
                self.show_status("error", f"{what}: {self.last_error}")
                return None
        try:
            with self.working(busy or f"{what}…"):
                result = fn(*args, **kwargs)
        except catch as exc:
            self.last_error = exc
            self.show_status("error", f"{what}: {plain_message(exc)}")
            return None
        except Exception as exc:  # a bug, not bad input: say so, and let it propagate
            self.last_error = exc
            self.show_status("error", f"{what}: unexpected {type(exc).__name__}: {exc} (this is "
                                      "a bug in widgetkit; the traceback is in the log)")
            raise
        self.show_status("ok", ok or f"{what}: done")
        return result


def reverse_by_default(y_kind: str | None) -> bool:
    """Wavenumber high to low for absorbance and transmittance (common practice in infrared)."""
    return y_kind in ("absorbance", "transmittance")


class PlotPanel(Panel):
    """A panel whose plot (``self.plot``, a SpectrumFigure with a ``"data"`` curve) shows the
    session's current spectrum.

    Parameters
    ----------
    reverse_x : bool, optional
        Wavenumber axis high to low; default :func:`reverse_by_default` of the spectrum's kind.
    n_bins : int, optional
        Decimation bins per visible window (default of :class:`SpectrumFigure`).
    """

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._reverse_x = reverse_x
        self._n_bins = n_bins
        self._shown_spectrum = None
        self._shown_kind = None
        super().__init__(session, owner=owner, read_only=read_only, **kwargs)

    @property
    def _figure_options(self) -> dict:
        return {"n_bins": self._n_bins} if self._n_bins else {}

    def _set_reverse(self, reverse: bool) -> None:
        self.plot.x_scale.reverse = reverse

    def _show_spectrum(self, sp) -> bool | None:
        """Draw ``sp`` as the data curve unless it is shown already.

        Returns None when nothing changed, else whether the x range is new (the zoom
        is then reset). The axis direction follows the spectrum's kind until the kind
        changes, so a user's choice is kept meanwhile.
        """
        if sp is self._shown_spectrum:
            return None
        old = self._shown_spectrum
        new_range = old is None or sp.x[0] != old.x[0] or sp.x[-1] != old.x[-1]
        self._shown_spectrum = sp
        if sp.y_kind != self._shown_kind:
            self._shown_kind = sp.y_kind
            self._set_reverse(self._reverse_x if self._reverse_x is not None
                              else reverse_by_default(sp.y_kind))
        self.plot.y_axis.label = sp.y_kind
        with self.plot.figure.hold_sync():
            self.plot.set_curve("data", sp.x, sp.y)
            if new_range:
                self.plot.reset_window()
        return new_range
