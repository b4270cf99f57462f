"""The Spectrum panel: open a file, see its labels, crop, baseline, absorbance."""

from __future__ import annotations

import html
import os
import tempfile

import ipywidgets as ipw
import numpy as np

from .. import processing
from ..errors import WidgetkitError
from ..formatting import article, unicode_units
from ._base import PlotPanel, row
from ._plot import COLORS, SpectrumFigure

__all__ = ["SpectrumPanel"]

BASELINE_CHOICES = [("polynomial (masked peaks)", "poly"), ("asymmetric least squares", "als")]
UPLOAD_SUFFIXES = ".csv,.txt,.tsv,.dat,.jdx,.dx,.jcamp"
#: above this many points the live baseline preview starts switched off (it takes ~1 s per 10⁶)
LIVE_PREVIEW_LIMIT = 200_000


#: labels of a file worth showing: typed keys the readers set, and standard JCAMP-DX labels
#: (normalised: lower case, no spaces or punctuation) -> what the metadata line calls them
_TYPED = (("technique", "technique"), ("sample_state", "sample"))
_FILE_LABELS = (("origin", "origin"), ("owner", "owner"), ("date", "date"), ("longdate", "date"),
                ("spectrometerdatasystem", "instrument"), ("instrumentparameters", "settings"),
                ("pathlength", "path length"), ("pressure", "pressure"),
                ("temperature", "temperature"))
_BASELINE_NAMES = {"poly": "polynomial", "als": "ALS"}


def _short(value, limit: int = 80) -> str:
    text = " ".join(str(value).split())
    return text if len(text) <= limit else text[: limit - 1] + "…"


def readable_metadata(meta: dict) -> list[tuple[str, str]]:
    """What a person wants to know of a spectrum file, as (label, text) pairs: title, what
    the file says of the sample and instrument, resolution, conversions made on reading and
    the reader's warnings; never the reader's own bookkeeping keys."""
    meta = meta or {}
    out = []
    if meta.get("title"):
        out.append(("title", _short(meta["title"])))
    for key, label in _TYPED:
        if meta.get(key):
            out.append((label, str(meta[key])))
    if isinstance(meta.get("resolution"), (int, float)):
        out.append(("resolution", f"{meta['resolution']:g} cm⁻¹"))
    if meta.get("x_axis") == "raman_shift":
        out.append(("x", "Raman shift"))
    if meta.get("x_converted"):
        out.append(("x in the file", unicode_units(str(meta["x_converted"]).replace("->", "→"))))
    if meta.get("transmittance_percent"):
        out.append(("y in the file", "percent transmittance (divided by 100)"))
    jc = meta.get("jcamp") if isinstance(meta.get("jcamp"), dict) else {}
    seen = {label for label, _ in out}
    for key, label in _FILE_LABELS:
        if jc.get(key) and label not in seen:
            out.append((label, _short(jc[key], 60)))
            seen.add(label)
    warnings = meta.get("warnings") or []
    if warnings:
        out.append(("⚠ reader", f"{len(warnings)} warning{'s' if len(warnings) != 1 else ''}: "
                    + _short(warnings[0], 120)))
    return out


class SpectrumPanel(PlotPanel):
    """Load a spectrum, show its metadata, crop, preview and subtract a baseline.

    Parameters
    ----------
    session : widgetkit.Session, optional
    reverse_x : bool, optional
        Wavenumber axis from high to low; default on for absorbance and
        transmittance, off for intensity.
    n_bins : int, optional
        Bins of the display decimation.

    Notes
    -----
    The baseline preview is computed here with the pure functions of
    :mod:`widgetkit.processing` and drawn dashed; only "Subtract baseline"
    changes the session.
    """

    title = "Spectrum"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._meta_key = None
        self._preview_key = None
        self._upload_dir: str | None = None
        super().__init__(session, reverse_x=reverse_x, n_bins=n_bins, owner=owner,
                         read_only=read_only, **kwargs)

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        self.plot = SpectrumFigure(title="Spectrum", reverse_x=True, **self._figure_options)
        self.plot.add_curve("data")
        self.plot.add_curve("baseline", color=COLORS["baseline"], dashed=True)
        self.plot.on_brush(self._on_brush)

        self.path_text = ipw.Text(placeholder="path to a .csv, .txt or .jdx file",
                                  description="File", layout=ipw.Layout(width="420px"))
        self.open_button = ipw.Button(description="Open file", icon="folder-open")
        self.open_button.on_click(self._on_open_click)
        self.upload = ipw.FileUpload(accept=UPLOAD_SUFFIXES, multiple=False,
                                     description="Upload")
        self.upload.observe(self._on_upload_change, names=["value"])
        self.meta_html = ipw.HTML()

        self.mouse_mode = ipw.ToggleButtons(options=[("zoom", "zoom"), ("select region", "select")],
                                            value="zoom", description="",
                                            style={"button_width": "115px"})
        self.mouse_mode.observe(self._on_mouse_mode_change, names=["value"])
        self.reset_zoom_button = ipw.Button(description="Whole range", icon="arrows-h")
        self.reset_zoom_button.on_click(lambda _: self.plot.reset_window())
        self.high_to_low = ipw.Checkbox(value=True, description="wavenumber high → low",
                                        indent=False)
        self.high_to_low.observe(self._on_axis_direction_change, names=["value"])

        self.crop_lo = ipw.FloatText(description="from", layout=ipw.Layout(width="160px"))
        self.crop_hi = ipw.FloatText(description="to", layout=ipw.Layout(width="160px"))
        self.crop_button = ipw.Button(description="Crop", icon="crop")
        self.crop_button.on_click(self._on_crop_click)

        self.absorbance_button = ipw.Button(description="To absorbance", icon="exchange")
        self.absorbance_button.on_click(self._on_absorbance_click)

        self.baseline_method = ipw.Dropdown(options=BASELINE_CHOICES, value="poly",
                                            description="Baseline")
        self.baseline_degree = ipw.BoundedIntText(value=3, min=0, max=15, description="degree",
                                                  continuous_update=False,
                                                  layout=ipw.Layout(width="180px"))
        # descriptions in full ("initial" width) and sliders that keep a usable length: the
        # row wraps instead of clipping them when a file browser narrows the notebook
        wide = {"description_width": "initial"}
        self.baseline_lam = ipw.FloatLogSlider(value=1e6, base=10, min=2, max=11,
                                               description="smoothness λ", style=wide,
                                               continuous_update=False, readout_format=".1e",
                                               layout=ipw.Layout(width="330px", min_width="260px"))
        self.baseline_p = ipw.FloatLogSlider(value=0.01, base=10, min=-4, max=-0.5,
                                             description="asymmetry p", style=wide,
                                             continuous_update=False, readout_format=".3f",
                                             layout=ipw.Layout(width="320px", min_width="250px"))
        self.baseline_preview = ipw.Checkbox(value=True, description="preview", indent=False)
        self.subtract_button = ipw.Button(description="Subtract baseline", icon="minus",
                                          button_style="primary", layout=ipw.Layout(width="170px"))
        self.subtract_button.on_click(self._on_subtract_click)
        for w in (self.baseline_method, self.baseline_degree, self.baseline_lam,
                  self.baseline_p, self.baseline_preview):
            w.observe(self._on_baseline_option_change, names=["value"])

        self._actions(self.crop_button, self.absorbance_button, self.subtract_button)
        self._file_actions(self.open_button, self.upload)
        self.baseline_box = row()
        self.baseline_box.add_class("wk-baseline-options")
        self.children = [
            row(self.path_text, self.open_button, self.upload),
            self.meta_html,
            row(ipw.Label("mouse:"), self.mouse_mode, self.reset_zoom_button, self.high_to_low),
            *self.plot.widgets(),
            row(ipw.Label("Crop:"), self.crop_lo, self.crop_hi, self.crop_button,
                self.absorbance_button),
            row(self.baseline_method, self.baseline_box, self.baseline_preview,
                self.subtract_button),
            self.status,
        ]
        self._show_baseline_options()

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.meta_html.value = "<i>No spectrum yet: open a file or upload one.</i>"
            self.plot.clear("data", "baseline")
            self._shown_spectrum = None
            return
        sp = s.spectrum
        if self._show_spectrum(sp):
            self.crop_lo.value, self.crop_hi.value = float(sp.x[0]), float(sp.x[-1])
            if sp.x.size > LIVE_PREVIEW_LIMIT and self.baseline_preview.value:
                self.baseline_preview.value = False
                self.show_status("info", f"baseline preview is off for {sp.x.size:,} points "
                                         "(about a second per change); tick 'preview' to see it")
        key = (s, sp)
        if self._meta_key is None or key[0] is not self._meta_key[0] \
                or key[1] is not self._meta_key[1]:
            self._meta_key = key
            self.meta_html.value = self._meta_html()
        self.absorbance_button.disabled = (self.absorbance_button.disabled
                                           or sp.y_kind != "transmittance")
        self._update_preview()

    def _meta_html(self) -> str:
        s = self.session
        sp = s.spectrum
        src = s.sources[0] if s.sources else {}
        items = [("points", f"{sp.x.size}"), ("range", f"{sp.x[0]:.6g} – {sp.x[-1]:.6g} cm⁻¹"),
                 ("y", sp.y_kind)]
        if src.get("path"):
            items.append(("file", os.path.basename(str(src["path"]))))
        if src.get("format"):
            items.append(("format", str(src["format"])))
        if src.get("sha256"):
            items.append(("sha256", str(src["sha256"])[:12] + "…"))
        items += readable_metadata(s.source_spectrum.meta)
        cells = " · ".join(f"<b>{html.escape(k)}</b> {html.escape(v)}" for k, v in items)
        return f'<div class="wk-meta" style="font-size:12px">{cells}</div>'

    # ------------------------------------------------------------------ baseline preview
    def _baseline_opts(self) -> tuple[str, dict]:
        m = self.baseline_method.value
        if m == "poly":
            return m, {"degree": int(self.baseline_degree.value)}
        return m, {"lam": float(self.baseline_lam.value), "p": float(self.baseline_p.value)}

    def _show_baseline_options(self) -> None:
        self.baseline_box.children = ([self.baseline_degree] if self.baseline_method.value == "poly"
                                      else [self.baseline_lam, self.baseline_p])

    def preview_baseline(self) -> np.ndarray | None:
        """The baseline the current options give on the current spectrum (not applied)."""
        sp = self.session.spectrum
        method, opts = self._baseline_opts()
        if method == "poly":
            return processing.baseline_poly(sp.x, sp.y, **opts)
        return processing.baseline_als(sp.y, **opts)

    def _update_preview(self) -> None:
        s = self.session
        if s is None or not self.baseline_preview.value or s.spectrum.y_kind == "transmittance":
            self._preview_key = None
            self.plot.clear("baseline")
            return
        method, opts = self._baseline_opts()
        key = (s.spectrum, method, tuple(sorted(opts.items())))
        old = self._preview_key
        if old is not None and old[0] is key[0] and old[1:] == key[1:]:
            return
        try:
            b = self.preview_baseline()
        except WidgetkitError as exc:
            self.show_status("error", f"baseline preview: {exc}")
            self.plot.clear("baseline")
            self._preview_key = None
            return
        self._preview_key = key
        self.plot.set_curve("baseline", s.spectrum.x, b)

    def _on_baseline_option_change(self, change) -> None:
        self._show_baseline_options()
        self._update_preview()

    # ------------------------------------------------------------------ actions
    def _on_subtract_click(self, _button) -> None:
        method, opts = self._baseline_opts()
        name = article(_BASELINE_NAMES.get(method, method) + " baseline")
        self._call("subtract baseline", "subtract_baseline", method, **opts,
                   ok=f"subtracted {name}", busy=f"subtracting {name}…")

    def _on_crop_click(self, _button) -> None:
        lo, hi = sorted((float(self.crop_lo.value), float(self.crop_hi.value)))
        self._call("crop", "crop", lo, hi, ok=f"cropped to {lo:.6g}–{hi:.6g} cm⁻¹")
        if self.last_error is None:
            self.plot.clear_brush()  # the rectangle marked a region of the data before the crop

    def _on_absorbance_click(self, _button) -> None:
        self._call("to absorbance", "to_absorbance", ok="converted to absorbance, A = −log10 T")

    def _on_brush(self, lo: float, hi: float) -> None:
        self.crop_lo.value, self.crop_hi.value = lo, hi
        self.show_status("info", f"region {lo:.6g}–{hi:.6g} cm⁻¹ selected; press Crop to keep it")

    def _on_mouse_mode_change(self, change) -> None:
        self.plot.set_mode(change["new"])

    def _on_axis_direction_change(self, change) -> None:
        self.plot.x_scale.reverse = bool(change["new"])

    def _set_reverse(self, reverse: bool) -> None:
        # through the check box, which the app links to every panel's axis
        self.high_to_low.value = reverse

    def _open(self, path: str) -> None:
        from ..session import Session

        name = os.path.basename(path)
        new = self._call("open", Session.from_file, path, ok=f"opened {name}",
                         catch=(WidgetkitError, OSError), busy=f"reading {name}…")
        if new is not None:
            self._use_session(new, said=f"opened {name}: {new.spectrum.x.size} points")

    def _on_open_click(self, _button) -> None:
        path = self.path_text.value.strip()
        if not path:
            self.show_status("error", "open: type the path of a spectrum file first")
            return
        self._open(os.path.expanduser(path))

    def _on_upload_change(self, change) -> None:
        files = change["new"]
        if not files:
            return
        f = files[0]
        name = os.path.basename(str(f["name"])) or "upload.txt"
        if self._upload_dir is None:
            self._upload_dir = tempfile.mkdtemp(prefix="widgetkit-upload-")
        path = os.path.join(self._upload_dir, name)
        with open(path, "wb") as fh:
            fh.write(bytes(f["content"]))
        self.path_text.value = path
        self._open(path)
