"""The Record panel: the steps of the analysis, notes, stepping back and forth, save, reopen,
verify."""

from __future__ import annotations

import html
import json
import os

import ipywidgets as ipw

from ..errors import WidgetkitError
from ..formatting import plural, summary_text
from ._base import Panel, row
from ._tables import TABLE_CSS

__all__ = ["RecordPanel"]


def _params_text(params: dict, limit: int = 90) -> str:
    text = ", ".join(f"{k}={json.dumps(v, ensure_ascii=False)}" for k, v in params.items())
    return text if len(text) <= limit else text[: limit - 1] + "…"


class RecordPanel(Panel):
    """The history of the session, with notes, stepping, save/open and verify.

    "Back" and "Forward" show the state after each step in every panel of the
    session (``Session.view``; the analysis is read-only meanwhile), "Latest"
    returns to the end. "Undo last step" drops the last step.
    """

    title = "Record"

    def _build(self) -> None:
        self.history_table = ipw.HTML()
        self.back_button = ipw.Button(description="Back", icon="step-backward")
        self.forward_button = ipw.Button(description="Forward", icon="step-forward")
        self.latest_button = ipw.Button(description="Latest", icon="fast-forward")
        self.step_slider = ipw.IntSlider(value=0, min=0, max=0, description="step",
                                         continuous_update=False)
        self.back_button.on_click(lambda _: self._go(self._viewing() - 1))
        self.forward_button.on_click(lambda _: self._go(self._viewing() + 1))
        self.latest_button.on_click(lambda _: self._go(-1))
        self.step_slider.observe(self._on_step_slider_change, names=["value"])
        self.undo_button = ipw.Button(description="Undo last step", icon="undo")
        self.undo_button.on_click(lambda _: self._call("undo", "undo", ok="last step undone"))

        self.note_text = ipw.Textarea(placeholder="a note for the record",
                                      layout=ipw.Layout(width="420px", height="60px"))
        self.note_button = ipw.Button(description="Add note", icon="sticky-note")
        self.note_button.on_click(self._on_note_click)

        self.save_path = ipw.Text(value="analysis.session.json", description="file",
                                  layout=ipw.Layout(width="380px"))
        self.save_button = ipw.Button(description="Save", icon="save")
        self.save_button.on_click(self._on_save_click)
        self.open_button = ipw.Button(description="Reopen", icon="folder-open")
        self.open_button.on_click(self._on_open_click)
        self.verify_button = ipw.Button(description="Verify", icon="check")
        self.verify_button.on_click(self._on_verify_click)
        self.verify_report = ipw.HTML()
        self._actions(self.undo_button, self.note_button)
        self._file_actions(self.save_button, self.open_button)
        self.children = [
            row(self.back_button, self.forward_button, self.latest_button, self.step_slider),
            self.status,
            self.history_table,
            row(self.note_text, self.note_button, self.undo_button),
            row(self.save_path, self.save_button, self.open_button, self.verify_button),
            self.verify_report,
        ]

    def _viewing(self) -> int:
        return -1 if self.session is None else self.session.viewing

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.history_table.value = "<i>no session</i>"
            return
        steps = s.history
        current = s.viewing
        rows = []
        for i, st in enumerate(steps):
            cls = "wk-current" if i == current else ""
            at = st.at[11:19] if len(st.at) >= 19 else st.at
            rows.append(f'<tr class="{cls}"><td>{i}</td><td>{html.escape(at)}</td>'
                        f"<td>{html.escape(st.kind)}</td>"
                        f'<td style="text-align:left">{html.escape(_params_text(st.params))}</td>'
                        f'<td style="text-align:left">{html.escape(summary_text(st.summary))}'
                        "</td></tr>")
        self.history_table.value = (
            TABLE_CSS + '<table class="wk-table wk-history"><thead><tr><th>step</th>'
            "<th>time (UTC)</th><th>kind</th><th>parameters</th><th>summary</th></tr></thead>"
            "<tbody>" + "".join(rows) + "</tbody></table>")
        n = len(steps)
        with self.step_slider.hold_trait_notifications():
            self.step_slider.max = n - 1
            self.step_slider.value = current
        self.back_button.disabled = current <= 0
        self.forward_button.disabled = current >= n - 1
        self.latest_button.disabled = current >= n - 1

    def _on_session_change(self, session, event) -> None:
        super()._on_session_change(session, event)
        if event.kind in ("step", "undo"):  # the last verification was of another record
            self.verify_report.value = ""

    # ------------------------------------------------------------------ actions
    def _go(self, index: int) -> None:
        if self.session is None:
            return
        n = len(self.session.history)
        i = index + n if index < 0 else index
        if 0 <= i < n and i != self.session.viewing:
            self._call("step", "view", i, busy=f"showing step {i}…")
            if self.last_error is None:
                self.show_status("info", self._view_text(self.session))

    def _on_step_slider_change(self, change) -> None:
        if self.session is not None and change["new"] != self.session.viewing:
            self._go(int(change["new"]))

    def _on_note_click(self, _button) -> None:
        text = self.note_text.value.strip()
        if not text:
            self.show_status("error", "note: type the text of the note first")
            return
        self._call("note", "note", text, ok="note added")
        if self.last_error is None:
            self.note_text.value = ""

    def _on_save_click(self, _button) -> None:
        path = os.path.expanduser(self.save_path.value.strip())
        if not path:
            self.show_status("error", "save: type a file name first")
            return
        self._call("save", "save", path, catch=(WidgetkitError, OSError), busy=f"saving {path}…",
                   ok=f"saved {plural(len(self.session.history), 'step')} to {path}"
                   if self.session is not None else "")

    def _on_open_click(self, _button) -> None:
        from ..session import Session

        path = os.path.expanduser(self.save_path.value.strip())
        new = self._call("reopen", Session.load, path, ok=f"reopened {path}",
                         catch=(WidgetkitError, OSError), busy=f"reopening {path}…")
        if new is not None:
            self.verify_report.value = ""
            self._use_session(new, said=f"reopened {path}: {plural(len(new.history), 'step')}; "
                                        "press Verify to replay them")

    def _on_verify_click(self, _button) -> None:
        n = len(self.session.history) if self.session is not None else 0
        report = self._call("verify", "verify", busy=f"replaying {plural(n, 'step')}…")
        if report is None:
            return
        if report.ok:
            self.show_status("ok", f"verified: {plural(report.steps_checked, 'step')} replay to "
                                   "the recorded results")
            self.verify_report.value = '<div class="wk-verify wk-verify-ok">✔ all steps replay</div>'
        else:
            items = "".join(f"<li>{html.escape(m)}</li>" for m in report.mismatches[:50])
            self.show_status("error", f"verify: {plural(len(report.mismatches), 'mismatch', 'mismatches')}")
            self.verify_report.value = f'<div class="wk-verify wk-verify-bad"><ul>{items}</ul></div>'
