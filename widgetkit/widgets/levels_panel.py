"""The Levels panel: assign lines to transitions, edit assignments, Fortrat and obs − calc plots,
the constants."""

from __future__ import annotations

import html

import bqplot as bq
import ipywidgets as ipw
import numpy as np
import pandas as pd

from ..formatting import column_label, display_isotopologue, unicode_units
from ..session.joint_view import joint_facts
from ._base import Panel, row
from ._levels_text import JOINT_KEY, edge_lines, fortrat_m, joint_heading, joint_offer, verdict_html
from ._plot import COLORS
from ._tables import html_table

__all__ = ["LevelsPanel", "fortrat_m", "verdict_html", "edge_lines"]

KIND_CHOICES = [("rovibrational band (P/R lines)", "rovibrational"),
                ("vibrational progression (band centres)", "progression"),
                ("linear molecule: parallel band (P/R, hot band)", "parallel"),
                ("linear molecule: perpendicular band (P/Q/R)", "perpendicular"),
                ("Raman: pure rotational (S lines)", "raman_rotational"),
                ("Raman: vibrational band (O/Q/S)", "raman_vibrational")]
#: Raman detector kinds: the frequency factor of the Stokes/anti-Stokes temperature
DETECTOR_CHOICES = [("detector: not stated", None), ("photon counting (ν³)", "photon_counting"),
                    ("energy measuring (ν⁴)", "energy")]
#: one colour per branch in the Fortrat plot of a linear-molecule or Raman band
BRANCH_COLORS = {"P": "#1f4e79", "Q": "#009e73", "R": "#cc79a7", "O": "#56b4e9", "S": "#8e44ad"}
ASSIGNMENT_COLUMNS = ["line_id", "position", "isotopologue", "label", "v_upper", "v_lower",
                      "J_upper", "J_lower", "calc", "obs_minus_calc", "normalised_residual",
                      "outlier"]
CONSTANT_COLUMNS = ["isotopologue", "name", "value", "stderr", "unit"]
#: one colour per isotopologue, none near the model's orange or the outliers' red
ISO_COLORS = ["#1f4e79", "#009e73", "#cc79a7", "#56b4e9", "#7f8c8d", "#8e44ad"]
OUTLIER_COLOR = COLORS["outlier"]
#: how the tables show cells: isotopologue keys as the trade writes them, units as cm⁻¹
CONVERTERS = {"isotopologue": display_isotopologue, "unit": unicode_units}
HEADINGS = {c: column_label(c, unit=False) for c in ("line_id", "v_upper", "v_lower", "J_upper",
                                                     "J_lower", "obs_minus_calc")}
HEADINGS.update({"position": "position / cm⁻¹", "calc": "calc / cm⁻¹",
                 "obs_minus_calc": "obs − calc / cm⁻¹", "normalised_residual": "(obs − calc)/σ"})


def _small_figure(title: str, x_label: str, y_label: str):
    xs, ys = bq.LinearScale(), bq.LinearScale()
    fig = bq.Figure(marks=[], title=title,
                    axes=[bq.Axis(scale=xs, label=x_label, grid_lines="none"),
                          bq.Axis(scale=ys, side="left", label=y_label, label_offset="60px",
                                  tick_format=".5~g", grid_lines="none")],
                    fig_margin={"top": 30, "bottom": 40, "left": 80, "right": 10},
                    layout=ipw.Layout(width="50%", height="280px"),
                    min_aspect_ratio=0.01, max_aspect_ratio=100, animation_duration=0)
    return fig, xs, ys


class LevelsPanel(Panel):
    """Assign the fitted lines of a molecule, edit single assignments, see the constants.

    "Lock" fixes the assignment of the selected line (``Session.set_assignment``),
    "Clear" leaves it unassigned and out of the fit (``Session.clear_assignment``),
    "Unlock" hands it back to the automatic assignment
    (``Session.unlock_assignment``); each re-runs the last assignment with the
    locks, and the status line says how the constants moved (in standard
    errors, with a warning above 3σ). A click on a point of either plot, or
    choosing a line, fills in its label and isotopologue. A doubtful result
    is shown with its reasons above the plots; outliers are red in the
    table and in both plots.
    """

    title = "Levels"

    def __init__(self, session=None, *, owner=None, read_only: bool = False, **kwargs):
        self._shown_assignment = 0  # a value no assignment is
        self._shown_key: tuple | None = None
        self._plot_ids: list[int] = []
        super().__init__(session, owner=owner, read_only=read_only, **kwargs)

    def _build(self) -> None:
        self.molecule = ipw.Text(value="HCl", description="molecule",
                                 placeholder="formula, e.g. HCl or CO",
                                 layout=ipw.Layout(width="230px"))
        self.kind = ipw.Dropdown(options=KIND_CHOICES, value="rovibrational", description="band",
                                 layout=ipw.Layout(width="380px"))
        # index 0 (not value None, which a dropdown shows as an empty box): "not stated";
        # shown only for the Raman kinds, the only ones it applies to
        self.detector = ipw.Dropdown(options=DETECTOR_CHOICES, index=0,
                                     tooltip="Raman: how the detector responds (for the "
                                             "Stokes/anti-Stokes temperature)",
                                     layout=ipw.Layout(width="200px", display="none"))
        self.kind.observe(self._on_kind_change, names=["value"])
        self.temperature = ipw.BoundedFloatText(value=0.0, min=0.0, max=1e5,
                                                description="T / K",
                                                tooltip="0 = not given",
                                                layout=ipw.Layout(width="160px"))
        self.joint = ipw.Checkbox(value=False, indent=False, disabled=True,
                                  description="joint isotopologue fit",
                                  layout=ipw.Layout(width="auto"))
        self.joint.add_class("wk-joint")
        self.assign_button = ipw.Button(description="Assign", icon="tags", button_style="primary")
        self.assign_button.add_class("wk-assign")
        self.assign_button.on_click(self._on_assign_click)

        self.edit_line = ipw.Dropdown(options=[], description="line",
                                      layout=ipw.Layout(width="240px"))
        self.edit_label = ipw.Text(description="label", placeholder="R(3), P(1) or 2-0",
                                   layout=ipw.Layout(width="190px"))
        self.edit_isotopologue = ipw.Text(description="isotopologue",
                                          placeholder="e.g. 1H-35Cl",
                                          style={"description_width": "initial"},
                                          layout=ipw.Layout(width="210px"))
        small = dict(layout=ipw.Layout(width="auto"))
        self.lock_button = ipw.Button(description="Lock", icon="lock", **small)
        self.lock_button.on_click(self._on_lock_click)
        self.clear_button = ipw.Button(description="Clear", icon="ban", **small,
                                       tooltip="leave this line unassigned (kept so by a lock)")
        self.clear_button.on_click(self._on_clear_click)
        self.unlock_button = ipw.Button(description="Unlock", icon="unlock", **small,
                                        tooltip="remove the lock: the automatic assignment decides")
        self.unlock_button.on_click(self._on_unlock_click)
        self.edit_line.observe(self._on_edit_line_change, names="value")
        self.verdict = ipw.HTML()
        self.verdict.add_class("wk-verdict")

        self.fortrat_fig, fx, fy = _small_figure("Fortrat plot", "m", "position / cm⁻¹")
        self.fortrat_obs = bq.Scatter(x=np.zeros(0), y=np.zeros(0), scales={"x": fx, "y": fy},
                                      colors=[COLORS["data"]], default_size=24)
        self.fortrat_calc = bq.Lines(x=np.zeros(0), y=np.zeros(0), scales={"x": fx, "y": fy},
                                     colors=[COLORS["model"]], stroke_width=1)
        self.fortrat_fig.marks = [self.fortrat_calc, self.fortrat_obs]
        self.residual_fig, rx, ry = _small_figure("obs − calc", "position / cm⁻¹",
                                                  "obs − calc / cm⁻¹")
        self.residual_fig.axes[1].tick_format = ".2~g"
        self.residual_points = bq.Scatter(x=np.zeros(0), y=np.zeros(0),
                                          scales={"x": rx, "y": ry}, colors=[COLORS["data"]],
                                          default_size=24)
        self.residual_fig.marks = [self.residual_points]
        for mark in (self.fortrat_obs, self.residual_points):
            mark.on_element_click(self._on_point_click)

        self.plot_legend = ipw.HTML()
        self.assignment_table = ipw.HTML()
        self.constants_table = ipw.HTML()
        self._actions(self.assign_button, self.joint, self.lock_button, self.clear_button,
                      self.unlock_button)
        self.children = [
            row(self.molecule, self.kind, self.temperature, self.detector, self.joint,
                self.assign_button),
            self.status,
            self.verdict,
            ipw.HBox([self.fortrat_fig, self.residual_fig]),  # two half-width plots share a line
            self.plot_legend,
            ipw.HTML("<b>Constants</b>"),
            self.constants_table,
            row(self.edit_line, self.edit_label, self.edit_isotopologue, self.lock_button,
                self.clear_button, self.unlock_button),
            ipw.HTML("<b>Assignments</b> (outliers in red)"),
            self.assignment_table,
        ]

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.edit_line.options = []
            self.assignment_table.value = self.constants_table.value = self.verdict.value = ""
            self._shown_key = None
            return
        state = s.state
        self._update_joint()
        key = (s, state.line_fit, state.assignment, state.locks, state.band_model)
        if self._shown_key is not None and all(a is b for a, b in zip(key, self._shown_key)):
            return  # nothing this panel shows has changed (e.g. a peak was added)
        self._shown_key = key
        lines = s.lines
        options = [(f"{int(r.line_id)} at {r.position:.4f} cm⁻¹", int(r.line_id))
                   for r in lines.itertuples()]
        if list(self.edit_line.options) != options:
            keep = self.edit_line.value
            self.edit_line.options = options
            ids = [o[1] for o in options]
            if ids:
                self.edit_line.value = keep if keep in ids else ids[0]
        a = s.assignments
        locks = s.locks
        edge = edge_lines(state.line_fit)
        if "line_id" in a:
            a = a.assign(lock=["locked" if int(i) in locks else "" for i in a["line_id"]],
                         edge=[int(i) in edge for i in a["line_id"]])
        cut = a[a["edge"] & a["label"].notna()] if "edge" in a else None
        self.verdict.value = verdict_html(s.assignment, cut)
        extra = [c for c in ("band", "side") if c in a.columns and a[c].notna().any()]
        cols = ASSIGNMENT_COLUMNS[:3] + extra + ASSIGNMENT_COLUMNS[3:]
        self.assignment_table.value = html_table(
            a, name="assignments", columns=[*cols, "lock"],
            headers=HEADINGS, formats={"obs_minus_calc": ".5f", "normalised_residual": ".2f"},
            converters=CONVERTERS,
            row_class=lambda r: "wk-outlier" if bool(r.get("outlier", False))
            or bool(r.get("edge", False)) else "",
            empty="no assignment yet: fit lines, then press Assign")
        consts = s.constants
        cols = [c for c in CONSTANT_COLUMNS[:1] + ["band"] + CONSTANT_COLUMNS[1:]
                if c in consts.columns or c in CONSTANT_COLUMNS]
        # with a band model beside the assignment: which route gave each number, what was fixed
        cols += [c for c in ("method", "note") if c in consts and (
            consts[c].nunique() > 1 if c == "method" else (consts[c].astype(str) != "").any())]
        joint = consts["isotopologue"] == JOINT_KEY if "isotopologue" in consts else None
        facts = joint_facts(s.assignment) if joint is not None and joint.any() else None
        self.constants_table.value = html_table(
            consts[~joint] if facts is not None else consts, name="constants", columns=cols,
            converters=CONVERTERS, empty="no constants yet")
        if facts is not None:  # the mass-independent set of a joint fit: a table of its own
            self.constants_table.value += joint_heading(facts, display_isotopologue) + html_table(
                consts[joint], name="joint-constants", columns=cols[1:], converters=CONVERTERS)
        if s.assignment is not self._shown_assignment:
            self._shown_assignment = s.assignment
            self._show_spec(state.assign_spec)
            self._render_plots(a)
            if self.edit_line.value is not None:  # the selected line's labels as now assigned
                self._fill_edit_fields(int(self.edit_line.value))

    def _show_spec(self, spec: dict | None) -> None:
        """The controls show what the last assignment was made with (molecule, kind, detector)."""
        if not spec:
            return
        mol = spec.get("molecule")
        if isinstance(mol, dict) and isinstance(mol.get("atoms"), list):
            mol = "".join(str(a) for a in mol["atoms"])
        if isinstance(mol, str):
            self.molecule.value = mol
        if spec.get("kind") in [v for _, v in KIND_CHOICES]:
            self.kind.value = spec["kind"]
        if spec.get("detector") in [v for _, v in DETECTOR_CHOICES]:
            self.detector.value = spec.get("detector")
        self.joint.value = bool(spec.get("joint", False)) and not self._joint_why_not()[0]
        t = spec.get("temperature")
        self.temperature.value = float(t) if isinstance(t, (int, float)) and t > 0 else 0.0

    def _render_plots(self, a: pd.DataFrame) -> None:
        if len(a) == 0:
            for m in (self.fortrat_obs, self.fortrat_calc, self.residual_points):
                m.x, m.y = np.zeros(0), np.zeros(0)
            self._plot_ids = []
            self.plot_legend.value = ""
            return
        a = a[a["label"].notna()].reset_index(drop=True)
        self._plot_ids = [int(i) for i in a["line_id"]]
        pos = a["position"].to_numpy(float)
        calc = pd.to_numeric(a["calc"], errors="coerce").to_numpy(float)
        omc = pd.to_numeric(a["obs_minus_calc"], errors="coerce").to_numpy(float)
        isos = (a["isotopologue"].astype(str).tolist() if "isotopologue" in a
                else [""] * len(a))
        colors = [ISO_COLORS[sorted(set(isos)).index(i) % len(ISO_COLORS)] for i in isos]
        rotational = ("J_lower" in a and "J_upper" in a
                      and pd.to_numeric(a["J_lower"], errors="coerce").notna().any())
        # a linear-molecule or Raman assignment (its table has the e/f components and sides)
        by_branch = "comp_lower" in a and "m" in a and a["branch"].notna().any()
        if by_branch:  # a linear-molecule or Raman band: its own running number, one colour a branch
            m = pd.to_numeric(a["m"], errors="coerce").to_numpy(float)
            isos = [f"{b} ({band})" if a["band"].nunique() > 1 else str(b)
                    for b, band in zip(a["branch"], a["band"])]
            colors = [BRANCH_COLORS.get(str(b), ISO_COLORS[0]) for b in a["branch"]]
            self.fortrat_fig.title, self.fortrat_fig.axes[0].label = "Fortrat plot", "m"
        elif rotational:
            m = fortrat_m(a["J_upper"], a["J_lower"])
            self.fortrat_fig.title, self.fortrat_fig.axes[0].label = "Fortrat plot", "m"
        else:  # band centres of a progression: position against the upper level
            m = pd.to_numeric(a.get("v_upper", pd.Series(np.nan, index=a.index)),
                              errors="coerce").to_numpy(float)
            self.fortrat_fig.title, self.fortrat_fig.axes[0].label = "progression", "v′"
        order = np.argsort(np.where(np.isfinite(m), m, np.inf), kind="stable")
        marked = a["outlier"].astype(bool) | (a["edge"].astype(bool) if "edge" in a else False)
        flagged = [OUTLIER_COLOR if o else c for o, c in zip(marked.tolist(), colors)]
        with self.fortrat_obs.hold_sync():
            self.fortrat_obs.x, self.fortrat_obs.y = m, pos
            self.fortrat_obs.colors = flagged
        ok = np.isfinite(m[order]) & np.isfinite(calc[order])
        with self.fortrat_calc.hold_sync():
            self.fortrat_calc.x, self.fortrat_calc.y = m[order][ok], calc[order][ok]
        with self.residual_points.hold_sync():
            self.residual_points.x, self.residual_points.y = pos, np.nan_to_num(omc)
            self.residual_points.colors = flagged
        if by_branch:
            keys = sorted(set(zip(isos, colors)))
            items = [f'<span style="color:{c}">●</span> {html.escape(k)} branch' for k, c in keys]
        else:
            keys = sorted(set(isos))
            items = [f'<span style="color:{ISO_COLORS[i % len(ISO_COLORS)]}">●</span> '
                     f"{html.escape(display_isotopologue(k))}" for i, k in enumerate(keys) if k]
        items.append(f'<span style="color:{COLORS["model"]}">━</span> calculated')
        items.append(f'<span style="color:{OUTLIER_COLOR}">●</span> outlier (obs − calc)')
        self.plot_legend.value = '<div class="wk-legend">' + " &nbsp; ".join(items) + "</div>"

    def _on_kind_change(self, change) -> None:
        self.detector.layout.display = "" if str(change["new"]).startswith("raman") else "none"
        self._update_joint()

    def _joint_why_not(self) -> tuple[str, list[str]]:
        """(why the joint fit is not offered, "" when it is; the assigned isotopologues)."""
        return joint_offer(self.kind.value, self.session.assignments if self.session else None)

    def _update_joint(self) -> None:
        """The joint isotopologue fit is offered for a rovibrational band whose assignment has
        lines of two or more isotopologues (assign once, then fit them together)."""
        why, isos = self._joint_why_not()
        self.joint.tooltip = why or ("fit the lines of " + ", ".join(
            display_isotopologue(i) for i in isos) + " with one set of mass-independent "
            "constants (isotope relations of the Dunham expansion)")
        # the other actions' state (no session, an earlier step shown, read-only, busy) holds too
        self.joint.disabled = bool(why) or self.assign_button.disabled
        if why:
            self.joint.value = False

    # ------------------------------------------------------------------ actions
    def assign_options(self) -> dict:
        """The arguments "Assign" passes to ``Session.assign_band``."""
        t = float(self.temperature.value)
        out = {"molecule": self.molecule.value.strip(), "kind": self.kind.value,
               "temperature": t if t > 0 else None}
        if self.kind.value.startswith("raman") and self.detector.value is not None:
            out["detector"] = self.detector.value
        if self.joint.value and not self.joint.disabled:
            out["joint"] = True
        return out

    def _on_assign_click(self, _button) -> None:
        opts = self.assign_options()
        molecule = opts.pop("molecule")
        self._call("assign", "assign_band", molecule, **opts, busy="assigning lines to levels…")
        if self.last_error is None:
            n = int(self.session.assignments["label"].notna().sum())
            doubtful = getattr(self.session.assignment, "status", "ok") != "ok"
            joint = " (joint isotopologue fit)" if opts.get("joint") else ""
            self.show_status("warning" if doubtful else "ok",
                             f"assigned {n} of {len(self.session.assignments)} lines{joint}"
                             + ("; the result is DOUBTFUL (reasons below)" if doubtful else ""))

    def _show_step_summary(self) -> None:
        """After a lock, clear or unlock: the step's summary (how the constants moved)."""
        if self.last_error is None:
            text = self.session.history[-1].summary
            self.show_status("warning" if "WARNING" in text or "DOUBTFUL" in text else "ok", text)

    def _on_lock_click(self, _button) -> None:
        lid = self.edit_line.value
        if lid is None:
            self.show_status("error", "lock: choose a line first")
            return
        labels = {"label": self.edit_label.value.strip()}
        if self.edit_isotopologue.value.strip():
            labels["isotopologue"] = self.edit_isotopologue.value.strip()
        if not labels["label"]:
            self.show_status("error", "lock: type a label, e.g. R(3), P(1) or 2-0")
            return
        self._call("lock", "set_assignment", int(lid), **labels,
                   busy="assigning again with the lock…")
        self._show_step_summary()

    def _on_clear_click(self, _button) -> None:
        self._edit_line("clear", "clear_assignment", "assigning again without the line…")

    def _on_unlock_click(self, _button) -> None:
        self._edit_line("unlock", "unlock_assignment", "assigning again…")

    def _edit_line(self, what: str, method: str, busy: str) -> None:
        lid = self.edit_line.value
        if lid is None:
            self.show_status("error", f"{what}: choose a line first")
            return
        self._call(what, method, int(lid), busy=busy)
        self._show_step_summary()

    def _fill_edit_fields(self, lid: int) -> None:
        """Label and isotopologue of line ``lid`` from the current assignment (or its lock)."""
        a = self.session.assignments if self.session is not None else None
        if a is None or "line_id" not in a or lid not in set(a["line_id"].tolist()):
            return
        row = a.set_index("line_id").loc[lid]
        self.edit_label.value = str(row["label"]) if pd.notna(row["label"]) else ""
        iso = row.get("isotopologue") if "isotopologue" in row else None
        self.edit_isotopologue.value = str(iso) if iso is not None and pd.notna(iso) else ""

    def _on_edit_line_change(self, change) -> None:
        if change["new"] is not None:
            self._fill_edit_fields(int(change["new"]))

    def _on_point_click(self, _mark, content: dict) -> None:
        i = (content.get("data") or {}).get("index")
        if i is None or not 0 <= int(i) < len(self._plot_ids):
            return
        lid = self._plot_ids[int(i)]
        if lid in [o[1] for o in self.edit_line.options]:
            self.edit_line.value = lid
            # the clicked point names its isotopologue: a lock then names it too
            self._fill_edit_fields(lid)
