"""What a user tripped over in the browser (screenshots of every tab on the demo data): the
Band model tab offered CO on an HCl session, the Levels tab forgot the temperature of the
assignment it shows, the Peaks tab showed an automatic threshold beside peaks found with a
given one, an empty residual plot crowded its axis with ticks.

The spectrum is the widget tests' simulated H-Cl band (conftest; self-consistency only)."""

import widgetkit as wk
from widgetkit.widgets import AnalysisApp, BandModelPanel, LevelsPanel


def _assigned(session):
    session.find_peaks(min_snr=10)
    session.fit_lines(shape="gaussian")
    session.assign_band(wk.Diatomic("H", "Cl"), temperature=296.0)
    return session


def test_the_band_model_tab_offers_the_molecule_of_the_session(session):
    panel = BandModelPanel(session)
    assert panel.molecule.value == "CO"          # nothing assigned yet: the panel's example
    _assigned(session)
    assert AnalysisApp(session).bandmodel_panel.molecule.value == "HCl"


def test_the_molecule_the_user_typed_stays_while_the_session_changes(session):
    _assigned(session)
    panel = BandModelPanel(session)
    assert panel.molecule.value == "HCl"
    panel.molecule.value = "DCl"                  # the user's choice
    session.note("a later step")
    assert panel.molecule.value == "DCl"


def test_the_levels_tab_shows_the_temperature_the_assignment_was_made_at(session):
    panel = LevelsPanel(session)
    assert panel.temperature.value == 0.0
    _assigned(session)
    assert panel.temperature.value == 296.0
    session.undo()                                # back to no assignment: nothing to show
    session.assign_band(wk.Diatomic("H", "Cl"))   # no temperature given
    assert panel.temperature.value == 0.0


def test_the_residual_axis_keeps_to_a_few_ticks(session):
    panel = BandModelPanel(session)
    axis = panel.plot.residual_figure.axes[1]
    assert axis.num_ticks == 3


def test_the_peaks_tab_shows_the_settings_of_the_search_behind_its_peaks(session):
    from widgetkit.widgets import PeaksPanel

    panel = PeaksPanel(session)
    assert panel.auto_snr.value is True                   # nothing searched yet
    session.find_peaks(min_snr=8, min_separation=0.5)
    assert (panel.auto_snr.value, panel.min_snr.value, panel.min_separation.value) == \
        (False, 8.0, 0.5)
    panel.min_snr.value = 12.0                            # the user's next try stays
    session.note("a later step")
    assert panel.min_snr.value == 12.0
    session.find_peaks()                                  # automatic threshold
    assert panel.auto_snr.value is True and panel.min_separation.value == 0.0
    session.view(1)                                       # back to the first search
    assert (panel.auto_snr.value, panel.min_snr.value) == (False, 8.0)
