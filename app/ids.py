"""Component ids of the dashboard, in one place."""

from __future__ import annotations

# per-session stores
LAKE_STORE = "lake-store"  # the last valid lake: parameters and profile
HISTORY_STORE = "history-store"  # every state the lake passed through this session

# page
ROOT = "page-root"
PAGE_NOTICE = "page-notice"  # one line the server writes when it refuses a request or a step fails
MEETING_TOGGLE = "meeting-toggle"
LAKE_TITLE = "lake-title"

# load control
LOAD_SLIDER = "load-slider"
YEARS_INPUT = "years-per-change"
YEARS_MESSAGE = "years-message"
WAIT_BUTTON = "let-years-pass"
RESET_BUTTON = "restart-history"
HISTORY_TAIL = "history-tail"  # the last state of the history (small: what a load change needs)
HISTORY_NOTE = "history-note"  # says when the history started again
#: big steps of the load: button id -> what it does
STEP_BUTTONS = {
    "down": "step-down-10",
    "up": "step-up-10",
    "past_tipping": "step-past-tipping",
    "under_recovery": "step-under-recovery",
}
SETTLE_BUTTON = "run-until-settled"

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
STATE_DIRECTION = "state-direction"
STATE_SENTENCE = "state-sentence"
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
VIEW_REGION = "view-region"
#: tab values (the value of ``VIEW_TABS``)
TAB_LAKE = "lake"
TAB_RECORD = "record"
TAB_PLANS = "plans"
TAB_MAP = "map"
TAB_REGION = "region"
#: tab value -> view container id, in tab order
VIEWS = {
    TAB_LAKE: VIEW_LAKE,
    TAB_RECORD: VIEW_RECORD,
    TAB_PLANS: VIEW_PLANS,
    TAB_MAP: VIEW_MAP,
    TAB_REGION: VIEW_REGION,
}

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
UPLOAD_LIMIT = "upload-limit"  # carries the upload size limit for assets/upload-limit.js
RECORD_MESSAGE = "record-message"
RECORD_SUMMARY = "record-summary"
RECORD_VOLUME = "record-volume"
RECORD_REPLICATES = "record-replicates"
RECORD_FIT_BUTTON = "record-fit"
RECORD_CANCEL_BUTTON = "record-cancel"
RECORD_PROGRESS = "record-progress"
RECORD_PROGRESS_TEXT = "record-progress-text"
RECORD_FIT_RESULT = "record-fit-result"
RECORD_USE_FIT = "record-use-fit"  # "Use this fitted lake"
RECORD_USE_MESSAGE = "record-use-message"
FIT_TRUST = "fit-trust"
FIT_TIPPING = "fit-tipping"  # rows of the fit summary
FIT_RECOVERY = "fit-recovery"
FIT_REGIME = "fit-regime"
RECORD_GRAPH = "record-graph"
RECORD_CLARITY_GRAPH = "record-clarity-graph"
WARNING_GRAPH = "warning-graph"
WARNING_WORDS = "warning-words"

# ---- plans view (app/views/plans) ----

# per-session stores of the plans view
PLAN_STORE = "plan-store"  # the plan's scenarios, each as Scenario.to_dict(); storage "session"
PLAN_EDITING = "plan-editing"  # the scenario the form is editing: {"name", "extra"} or None
PLAN_RESULTS_STORE = "plan-results-store"  # the last completed run: lake, outcomes and yearly series
PLAN_PRECAUTION_STORE = "plan-precaution-store"  # the last precautionary-load answer
PLAN_RUN_REQUEST = "plan-run-request"  # {"token"} of the run asked for (memory: a reload never re-runs)
PLAN_PRECAUTION_REQUEST = "plan-precaution-request"  # {"token", "scenario", ...} (memory)

# the lake the plan is for
PLAN_LAKE_NOTE = "plan-lake-note"

#: scenario form field name -> input id
PLAN_FORM = {
    name: f"plan-form-{name.replace('_', '-')}"
    for name in (
        "name",
        "years",
        "load_kind",
        "load_from",
        "cut_percent",
        "cut_years",
        "step_to",
        "step_year",
        "table",
        "removal_kg",
        "removal_year",
        "inact_percent",
        "inact_year",
        "inact_years",
        "cv",
        "noise_sd",
        "members",
        "seed",
        "clear_rule",
        "clear_tp",
        "stay_years",
    )
}
#: group of load fields -> its container ("from": the starting load, shown for every kind but the table)
PLAN_LOAD_GROUPS = {
    group: f"plan-load-group-{group.replace('_', '-')}" for group in ("from", "linear_cut", "step", "table")
}
#: form section -> message id beside it
PLAN_MESSAGES = {section: f"plan-message-{section}" for section in ("basics", "load", "treatments", "variability")}

# scenario list and its buttons
PLAN_LIST = "plan-list"
PLAN_ADD = "plan-add"
PLAN_UPDATE = "plan-update"
PLAN_EDIT = "plan-edit"
PLAN_DUPLICATE = "plan-duplicate"
PLAN_DELETE = "plan-delete"
PLAN_STATUS = "plan-status"

# run
PLAN_RUN = "plan-run"
PLAN_CANCEL = "plan-cancel"
PLAN_PROGRESS = "plan-progress"
PLAN_PROGRESS_TEXT = "plan-progress-text"
PLAN_RUN_MESSAGE = "plan-run-message"

# results
PLAN_RESULTS_NOTE = "plan-results-note"
PLAN_STALE = "plan-stale"  # "results out of date, run again"
PLAN_NEW = "plan-new"  # a clean form for a new scenario
PLAN_TABLE = "plan-table"
PLAN_DEFINITIONS = "plan-definitions"
PLAN_TRAJECTORY_GRAPH = "plan-trajectory-graph"
PLAN_CLEAR_GRAPH = "plan-clear-graph"
PLAN_RECOVERY_GRAPH = "plan-recovery-graph"
PLAN_LOAD_GRAPH = "plan-load-graph"

# precautionary load
PLAN_PREC_SCENARIO = "plan-prec-scenario"
PLAN_PREC_YEARS = "plan-prec-years"
PLAN_PREC_PERCENT = "plan-prec-percent"
PLAN_PREC_BUTTON = "plan-prec-find"
PLAN_PREC_PROGRESS_TEXT = "plan-prec-progress-text"
PLAN_PREC_RESULT = "plan-prec-result"
PLAN_PREC_ANSWER = "plan-prec-answer"  # the answer inside PLAN_PREC_RESULT
PLAN_PREC_MESSAGE = "plan-prec-message"

# save and find again
PLAN_SAVE_NAME = "plan-save-name"
PLAN_SAVE = "plan-save"
PLAN_SAVE_MESSAGE = "plan-save-message"
PLAN_SAVED_LIST = "plan-saved-list"
PLAN_LOAD_SAVED = "plan-load-saved"
PLAN_SAVED_DETAILS = "plan-saved-details"

# export
PLAN_EXPORT_REPORT = "plan-export-report"
PLAN_EXPORT_TRAJECTORIES = "plan-export-trajectories"
PLAN_EXPORT_TABLE = "plan-export-table"
PLAN_DOWNLOAD = "plan-download"
PLAN_EXPORT_MESSAGE = "plan-export-message"

# --------------------------------------------------------------------------
# the two-pool lake (water and mud)
# --------------------------------------------------------------------------
LAKE_MODEL = "lake-model"  # the choice between the two lake models
ONE_BOX_FIELDS_BOX = "one-box-fields"
TWO_POOL_FIELDS_BOX = "two-pool-fields"
#: two-pool field -> (input id, message id)
TWO_POOL_FIELDS = {
    name: (f"field-2pool-{name}", f"field-2pool-{name}-message")
    for name in ("sedimentation", "outflow", "burial", "recycling_rate", "recycling_half", "recycling_exponent")
}
STATE_SEDIMENT = "state-sediment"  # water P and sediment P in the readout
TIME_LAG = "time-lag"  # the years until clear water, under the time panel
PLAN_BOTH_MODELS = "plan-both-models"  # run the plan under both lake models side by side

# --------------------------------------------------------------------------
# region view (app/views/region): screen many lakes at once
# --------------------------------------------------------------------------
REGION_STORE = "region-store"  # the last completed screen: lakes, failures, notes (session)
REGION_FILES = "region-files"  # the files ready to screen: LAKES.csv and RECORDS.csv as data URLs (memory)
REGION_LAKES_UPLOAD = "region-lakes-upload"
REGION_RECORDS_UPLOAD = "region-records-upload"
REGION_DEMO = "region-demo"  # load the built-in invented region
REGION_FILES_NOTE = "region-files-note"  # which files are ready
REGION_MESSAGE = "region-message"  # what to fix in a file, or why a run stopped
REGION_REPLICATES = "region-replicates"
REGION_RUN = "region-run"
REGION_CANCEL = "region-cancel"
REGION_PROGRESS = "region-progress"
REGION_PROGRESS_TEXT = "region-progress-text"
REGION_SUMMARY = "region-summary"
REGION_TABLE = "region-table"
REGION_FAILED = "region-failed"
REGION_GRAPH = "region-graph"
REGION_EXPONENT = "region-exponent"  # the recycling exponent the regions on the plane are drawn for
REGION_PLANE_NOTE = "region-plane-note"
REGION_OPEN_MESSAGE = "region-open-message"
REGION_EXPORT_CSV = "region-export-csv"
REGION_EXPORT_HTML = "region-export-html"
REGION_DOWNLOAD = "region-download"
REGION_EXPORT_MESSAGE = "region-export-message"
