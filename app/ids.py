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

# views (tabs)
VIEW_TABS = "view-tabs"
VIEW_LAKE = "view-lake"
VIEW_RECORD = "view-record"
VIEW_PLANS = "view-plans"
VIEW_MAP = "view-map"
#: tab value -> view container id
VIEWS = {"lake": VIEW_LAKE, "record": VIEW_RECORD, "plans": VIEW_PLANS, "map": VIEW_MAP}

# clarity words in the readout
CLARITY_WORDS = "clarity-words"
HEALTH_WORDS = "health-words"
FIT_WORDS = "fit-words"

# regime map view
MAP_GRAPH = "map-graph"
MAP_AXIS = "map-axis"
MAP_NOTE = "map-note"

# monitoring record view (fit to data, warning signs)
RECORD_STORE = "record-store"  # the monitoring series on show
FIT_STORE = "fit-store"  # the last fit: parameters, bands, regime probabilities, bootstrap cloud
RECORD_UPLOAD = "record-upload"
RECORD_MESSAGE = "record-message"
RECORD_SUMMARY = "record-summary"
RECORD_VOLUME = "record-volume"
RECORD_REPLICATES = "record-replicates"
RECORD_FIT_BUTTON = "record-fit"
RECORD_CANCEL_BUTTON = "record-cancel"
RECORD_PROGRESS = "record-progress"
RECORD_PROGRESS_TEXT = "record-progress-text"
RECORD_FIT_RESULT = "record-fit-result"
RECORD_USE_BUTTON = "record-use-fit"
RECORD_GRAPH = "record-graph"
RECORD_CLARITY_GRAPH = "record-clarity-graph"
WARNING_GRAPH = "warning-graph"
WARNING_WORDS = "warning-words"

# ---- plans view: ids below this line belong to the plans view modules ----
