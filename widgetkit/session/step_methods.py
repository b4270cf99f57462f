"""The analysis steps of a :class:`~widgetkit.session.Session` as methods.

Each method only gathers its arguments, unconverted, into the parameters of one step kind
and calls ``self._run(kind, params)``: the kind's declaration checks them (naming the
argument and the value) and its ``apply`` computes (see :mod:`widgetkit.session.steps`).
"""

from __future__ import annotations

import pandas as pd

from .params import show
from .steps import STEP_KINDS, Step

__all__ = ["StepMethods"]


class StepMethods:
    """The step methods :class:`~widgetkit.session.Session` takes from this mixin; they need
    its ``_run`` and the read-only views (``peaks``, ``lines``, ...)."""

    def _run(self, kind: str, params: dict) -> Step:  # pragma: no cover - Session's
        raise NotImplementedError

    def crop(self, lo: float, hi: float) -> None:
        """Keep ``lo <= x <= hi`` (cm⁻¹)."""
        self._run("crop", {"lo": lo, "hi": hi})

    def to_absorbance(self) -> None:
        """Convert a transmittance spectrum to absorbance, A = −log₁₀ T."""
        self._run("to_absorbance", {})

    def to_raman_shift(self, excitation: float, *, unit: str = "nm", medium: str | None = None,
                       axis_medium: str = "vacuum") -> None:
        """Re-express the spectrum (absolute wavenumber of scattered light) as Raman shift,
        Δν̃ = ν̃₀ − ν̃ (Stokes positive, anti-Stokes kept as negative shifts).

        ``excitation`` is the laser line in ``unit`` (``"nm"`` or ``"cm-1"``); for a
        wavelength, ``medium`` must say ``"air"`` or ``"vacuum"``. ``axis_medium="air"``
        when the file's own wavelengths were measured in air. See
        :func:`widgetkit.processing.to_raman_shift`. Peaks, lines and assignments of the
        absolute axis are cleared (the step's result lists them).
        """
        self._run("to_raman_shift", {"excitation": excitation, "unit": unit, "medium": medium,
                                     "axis_medium": axis_medium})

    def subtract_baseline(self, method: str = "poly", **opts) -> None:
        """Subtract a baseline: ``"poly"`` (``degree=``) or ``"als"`` (``lam=``, ``p=``).

        See :func:`widgetkit.processing.subtract_baseline` for every option.
        """
        self._run("subtract_baseline", {"method": method, **opts})

    def find_peaks(self, *, min_snr: float | None = None, min_separation: float | None = None,
                   noise_region=None, min_prominence: float | None = None,
                   fringe: bool = True) -> pd.DataFrame:
        """Find the peaks (dips for transmittance) that stand out of the noise; replaces the
        peak table and clears the line fit and assignment that rested on the old one.

        ``snr`` is the height above the local baseline divided by the noise σ, measured on
        the line-free points (or on ``noise_region=(lo, hi)``, a flat stretch in cm⁻¹).
        ``min_snr=None`` (default) sets the threshold from the length of the spectrum so
        that pure noise gives on average under 0.05 false peaks; see
        :func:`widgetkit.processing.search_peaks`. The step records σ, how it was measured
        and the threshold used. With ``fringe=True`` (default) an interference fringe of
        the baseline is found and set aside first (:mod:`widgetkit.processing.fringe`): its
        maxima are not peaks, and a later ``fit_lines`` subtracts it with its background.
        """
        params = {"min_snr": min_snr, "min_separation": min_separation, "fringe": bool(fringe)}
        if noise_region is not None:
            params["noise_region"] = noise_region
        if min_prominence is not None:
            params["min_prominence"] = min_prominence
        self._run("find_peaks", params)
        return self.peaks

    def add_peak(self, position: float, *, snap: bool = True) -> int:
        """Add a peak at ``position``; returns its id.

        With ``snap`` the peak moves to the top of the line it was put on, when that top
        is within about one line width (else it stays where it was put). A position
        already taken by a peak (closer than a quarter of a line width) is refused with
        :class:`~widgetkit.errors.SessionStateError` naming that peak.
        """
        step = self._run("add_peak", {"position": position, "snap": snap})
        return int(step.result["peak_id"])

    def remove_peak(self, peak_id: int) -> None:
        """Remove the peak ``peak_id``."""
        self._run("remove_peak", {"peak_id": peak_id})

    def fit_lines(self, *, shape: str = "voigt", shared_width=False, baseline: str | None = "auto",
                  region=None, strict: bool = False, max_nfev: int | None = None,
                  time_limit: float | None = None, prune: bool = True,
                  add_missed: bool = True, weighting: str = "auto", progress=None,
                  **options) -> pd.DataFrame:
        """Fit every peak (inside ``region``) with a line shape; see :func:`widgetkit.lines.fit`.

        The fit always ends: at most ``max_nfev`` model evaluations per solve (default
        1000) and ``time_limit`` seconds (default ``"auto"``: 5 s plus 0.01 s a line).
        ``progress(fraction, text)`` is called during the fit and not recorded. With
        ``prune=True`` (default) the lines the data cannot support (area below 3
        standard errors, width on its lower bound, centre moved to where another line
        sits, collapsed onto a neighbour) are removed, lines that ran away are held
        (width, centre), and the fit is repeated once; ``s.line_fit.removed`` and the
        step's summary list the removed lines with their reasons. The peaks stay as
        they are (a later fit starts from all of them again); peaks added by hand are
        never removed, only flagged. With ``add_missed=True`` (default) the residual is
        searched for lines the peak search missed (a weak line on the flank of a strong
        one) and the fit repeated with them, kept only if chi-square fell by more than
        the added parameters explain; ``s.line_fit.added`` lists them. With
        ``weighting="auto"`` (default) a spectrum converted from transmittance
        (``to_absorbance``) is fitted once more weighted for the noise of absorbance, which
        grows as 1/T (:mod:`widgetkit.lines.reweight`); ``"none"`` does not. A fit that stops
        before it has converged (on the budget or a solver's tolerance) is kept and
        recorded with ``converged`` False and the reason (``s.line_fit.message``,
        ``s.line_fit.stopped``); with ``strict=True`` it is refused instead
        (:class:`~widgetkit.errors.FitError`, whose ``.fit`` holds it) and the previous
        lines stay. The step records the budget and what was used;
        ``verify`` replays a fit stopped by its time limit to the recorded number of
        evaluations. Returns :attr:`lines`.
        """
        from .kinds_lines import progress_to

        params = {"shape": shape, "shared_width": shared_width, "baseline": baseline,
                  "region": region, **options}
        if strict:
            params["strict"] = True
        if max_nfev is not None:
            params["max_nfev"] = max_nfev
        if time_limit is not None:
            params["time_limit"] = time_limit
        if prune is not True:
            params["prune"] = prune
        params["add_missed"] = bool(add_missed)
        params["weighting"] = weighting
        with progress_to(progress):
            self._run("fit_lines", params)
        return self.lines

    def assign_band(self, molecule, *, kind: str = "rovibrational", temperature: float | None = None,
                    **options) -> pd.DataFrame:
        """Assign the fitted lines to transitions of ``molecule`` and fit its constants.

        ``molecule`` is a :class:`widgetkit.Diatomic`, a :class:`widgetkit.Linear` or a formula
        (``"HCl"``; atoms along the axis, ``"OCO"``, for the linear kinds); ``kind`` is
        ``"rovibrational"`` (P/R branches of a diatomic, isotopologues), ``"progression"`` (band
        centres), ``"parallel"`` or ``"perpendicular"`` (bands of a linear molecule, with spin
        statistics, Q branches and hot bands), ``"raman_rotational"`` or
        ``"raman_vibrational"`` (Raman-shift spectra; ``detector="energy"`` or
        ``"photon_counting"`` for the Stokes/anti-Stokes temperature). See
        :func:`widgetkit.levels.assign_rovibrational` and
        :func:`widgetkit.levels.assign_linear` for the options. For ``"rovibrational"``,
        ``exclude_hidden=True`` (default) leaves lines that may hold an unresolved line of
        another isotopologue out of T_rot and the area ratios, and ``hot_bands=True``
        (default) also seeks the band from its strongest lines and assigns the hot band
        (v′+1) ← (v″+1) beside it (lines with their own v_upper, v_lower; constants with a
        ``band`` column, e.g. "2-1", when one is found); both are recorded (a step recorded
        without them replays with ``False``, as it was made).
        Returns :attr:`assignments`; constants are in :attr:`constants`.
        """
        if hasattr(molecule, "to_dict"):
            molecule = molecule.to_dict()
        params = {"molecule": molecule, "kind": kind, "temperature": temperature, **options}
        if kind == "rovibrational":
            params.setdefault("exclude_hidden", True)
            params.setdefault("hot_bands", True)
        self._run("assign_band", params)
        return self.assignments

    def fit_band_model(self, molecule, *, progress=None, **options):
        """Fit a model of the whole band to the current spectrum (one recorded step).

        ``molecule`` is a :class:`widgetkit.Diatomic` or a formula (``"CO"``); the options
        are those of :func:`widgetkit.bandmodel.fit` (``band``, ``temperature``,
        ``resolution`` — default from the file's ``##RESOLUTION`` —, ``instrument``,
        ``isotopologues``, ``fix``, ``baseline``, ``joint``, ...). ``progress(stage,
        iteration, chisqr, elapsed)`` is called during the fit and not recorded. The
        constants join :attr:`constants` with ``method`` "band model". A fit that cannot
        be set up raises :class:`~widgetkit.errors.FitError` and changes nothing; a fit
        that stops early is kept and marked "doubtful". ``widen_errors=True`` (default)
        widens the standard errors for a structured residual, ``check_contour=True``
        (default) compares the model's P and R branch maxima with the data's, and
        ``second_look=True`` (default) looks again at fits that end with an implausible
        constant (see :func:`widgetkit.bandmodel.fit`); all are recorded (a step recorded without them replays
        with ``False``, as it was made).

        Returns the :class:`~widgetkit.bandmodel.BandFit` (also :attr:`band_model`).
        """
        from .kinds_bandmodel import plain_bands, progress_to

        if hasattr(molecule, "to_dict"):
            molecule = molecule.to_dict()
        params = {"molecule": molecule, "widen_errors": True, "check_contour": True,
                  "second_look": True, **options}
        if params.get("band") is not None:
            params["band"] = plain_bands(params["band"])
        with progress_to(progress):
            self._run("fit_band_model", params)
        return self.band_model

    def set_assignment(self, line_id: int, **labels) -> None:
        """Lock the assignment of one line (``label="R(3)"``, ``isotopologue=``, ``v_upper=``, ...).

        A lock is an observation that wins: the last ``assign_band`` is re-run with the locks,
        the band renumbered around the lock where it can agree, otherwise the locked line is
        kept with its label and flagged as an outlier. A lock with a label must name the
        isotopologue when the assignment holds several (it is filled in when it holds one).
        The step's summary and result say how the constants moved, in units of their previous
        standard errors, with a warning above 3σ.
        """
        self._run("set_assignment", {"line_id": line_id, "labels": labels})

    def set_assignments(self, assignments: dict) -> None:
        """Lock several lines at once, ``{line_id: {"label": "R(0)", ...}, ...}``, in one step
        (when one lock alone cannot put a wrong assignment right)."""
        if not isinstance(assignments, dict):
            raise STEP_KINDS["set_assignment"].argument_error(
                f"set_assignments: argument 'assignments' must be a dict {{line_id: labels}}, "
                f"got {show(assignments)}")
        self._run("set_assignment", {"assignments": {str(k): v for k, v in assignments.items()}})

    def clear_assignment(self, line_id: int) -> None:
        """Leave one line unassigned (locked so; e.g. a blend or an impurity line)."""
        self._run("clear_assignment", {"line_id": line_id})

    def unlock_assignment(self, line_id: int) -> None:
        """Remove the lock of one line (set or cleared): the automatic assignment labels it again."""
        self._run("unlock_assignment", {"line_id": int(line_id)})

    def note(self, text: str) -> None:
        """Add a note to the record."""
        self._run("note", {"text": text})
