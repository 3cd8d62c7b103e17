"""Component ids of the dashboard, in one place."""

from __future__ import annotations

# per-session stores
LAKE_STORE = "lake-store"  # the last valid lake: parameters and profile
HISTORY_STORE = "history-store"  # every state the lake passed through this session

# page
ROOT = "page-root"
MEETING_TOGGLE = "meeting-toggle"
LAKE_TITLE = "lake-title"

# load control
LOAD_SLIDER = "load-slider"
YEARS_INPUT = "years-per-change"
YEARS_MESSAGE = "years-message"
WAIT_BUTTON = "let-years-pass"
RESET_BUTTON = "restart-history"

# in-lake removal
REMOVAL_INPUT = "removal-kg"
REMOVAL_BUTTON = "removal-apply"
REMOVAL_NEEDED = "removal-needed"
REMOVAL_MESSAGE = "removal-message"

# figures and readout
EQUILIBRIUM_GRAPH = "equilibrium-graph"
TIME_GRAPH = "time-graph"
READOUT = "readout"
STATE_WORD = "state-word"
REGIME_WORDS = "regime-words"
TIPPING_WORDS = "tipping-words"
RECOVERY_WORDS = "recovery-words"

# lake and model settings
SETTINGS_PANEL = "settings-panel"
SETTINGS_STATUS = "settings-status"

#: settings field name -> (input id, message id)
FIELDS = {
    name: (f"field-{name}", f"field-{name}-message")
    for name in (
        "loss_rate",
        "recycling_max",
        "recycling_half",
        "recycling_exponent",
        "area_km2",
        "mean_depth_m",
        "load_kg_yr",
    )
}
