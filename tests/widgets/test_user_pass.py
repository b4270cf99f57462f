"""What a user tripped over in the browser (screenshots of every tab on the demo data): the
Band model tab offered CO on an HCl session, the Levels tab forgot the temperature of the
assignment it shows, an empty residual plot crowded its axis with ticks.

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
