"""The page frame that holds the views: the stores, the top bar, the caution, the tabs and the footer.

Every view stays mounted (hidden when its tab is not chosen), so its state
survives a change of tab.
"""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, dcc, html

from . import ids
from .stores import LakeStore, RecordStore, lake_from_store
from .theme import is_meeting
from .views.lake.layout import build_view as lake_view
from .views.map.layout import build_view as map_view
from .views.plans.layout import build_view as plans_view
from .views.record.layout import build_view as record_view
from .views.region.layout import build_view as region_view

CAUTION = (
    "These figures are scenario estimates from a simplified (one-box or two-pool) model of lake phosphorus. "
    "They are not a water-safety or health assessment: follow local health authorities and their advisories. "
    "In-lake treatments need permits and licensed practice."
)

#: the caution in the meeting view: the same cautions, on one line
CAUTION_SHORT = (
    "Scenario estimates from a simplified model, not a health assessment: follow local health authorities. "
    "In-lake treatments need permits and licensed practice."
)

#: tab value -> label, in tab order
TABS = {
    ids.TAB_LAKE: "The lake now",
    ids.TAB_RECORD: "Monitoring record",
    ids.TAB_PLANS: "Plans compared",
    ids.TAB_MAP: "Regime map",
    ids.TAB_REGION: "Region",
}
HIDDEN = {"display": "none"}
_LIVE: dict[str, Any] = {"aria-live": "polite"}  # screen readers read the notice when it changes


def stores(lake: LakeStore, record: RecordStore | None) -> list[dcc.Store]:
    """Every store of the page (see app.stores for what each holds)."""
    session = [
        dcc.Store(id=ids.LAKE_STORE, storage_type="session", data=dict(lake)),
        dcc.Store(id=ids.HISTORY_STORE, storage_type="session"),
        dcc.Store(id=ids.HISTORY_TAIL, storage_type="session"),
        dcc.Store(id=ids.RECORD_STORE, storage_type="session", data=None if record is None else dict(record)),
        dcc.Store(id=ids.FIT_STORE, storage_type="session"),
        dcc.Store(id=ids.PLAN_STORE, storage_type="session", data={"scenarios": []}),
        dcc.Store(id=ids.PLAN_EDITING, storage_type="session"),
        dcc.Store(id=ids.PLAN_RESULTS_STORE, storage_type="session"),
        dcc.Store(id=ids.PLAN_PRECAUTION_STORE, storage_type="session"),
        dcc.Store(id=ids.REGION_STORE, storage_type="session"),
    ]
    memory = [
        dcc.Store(id=ids.PLAN_RUN_REQUEST, storage_type="memory"),
        dcc.Store(id=ids.PLAN_PRECAUTION_REQUEST, storage_type="memory"),
        dcc.Store(id=ids.REGION_FILES, storage_type="memory"),
    ]
    return session + memory


def top_bar(lake_name: str) -> html.Header:
    return html.Header(
        [
            html.Div(
                [html.H1("Turnback"), html.Span(lake_name, id=ids.LAKE_TITLE, className="lake-name")],
                className="title",
            ),
            dcc.Checklist(
                id=ids.MEETING_TOGGLE,
                options=[{"label": " Meeting view (large, plain words)", "value": "on"}],
                value=[],
                className="meeting-toggle",
                persistence=True,
                persistence_type="session",
            ),
        ],
        className="top-bar",
    )


def tabs() -> dcc.Tabs:
    return dcc.Tabs(
        id=ids.VIEW_TABS,
        value=ids.TAB_LAKE,
        children=[dcc.Tab(label=label, value=value) for value, label in TABS.items()],
        className="view-tabs",
        persistence=True,
        persistence_type="session",
    )


def build_layout(lake: LakeStore, record: RecordStore | None = None) -> html.Div:
    """The whole page, on ``lake`` (a LakeStore) with the monitoring ``record`` on show."""
    params, profile = lake_from_store(lake)
    views = {
        ids.TAB_LAKE: lake_view(params, profile),
        ids.TAB_RECORD: record_view(),
        ids.TAB_PLANS: plans_view(),
        ids.TAB_MAP: map_view(),
        ids.TAB_REGION: region_view(),
    }
    return html.Div(
        [
            *stores(lake, record),
            top_bar(profile.name),
            html.Div(
                [html.Span(CAUTION, className="caution-full"), html.Span(CAUTION_SHORT, className="caution-short")],
                className="caution-banner",
                role="note",
            ),
            html.Div(id=ids.PAGE_NOTICE, className="page-notice", role="status", **_LIVE),
            tabs(),
            *[
                html.Div(children, id=ids.VIEWS[tab], style={} if tab == ids.TAB_LAKE else HIDDEN)
                for tab, children in views.items()
            ],
            html.Footer(
                "Model after Carpenter, Ludwig & Brock (1999), Ecological Applications 9:751–771. "
                "Demo lake and its numbers are invented.",
                className="footer",
            ),
        ],
        id=ids.ROOT,
        className="page",
    )


def on_view(tab: str | None) -> list[dict[str, str]]:
    """Show the chosen view, hide the others (all stay mounted, so their state survives)."""
    chosen = tab if tab in ids.VIEWS else ids.TAB_LAKE
    return [{} if name == chosen else HIDDEN for name in ids.VIEWS]


def on_meeting(value: list[str] | None) -> str:
    """The meeting view: larger text everywhere (assets/turnback.css)."""
    return "page meeting" if is_meeting(value) else "page"


def register(app: Dash) -> None:
    app.callback(
        output=[Output(v, "style") for v in ids.VIEWS.values()],
        inputs={"tab": Input(ids.VIEW_TABS, "value")},
    )(on_view)
    app.callback(output=Output(ids.ROOT, "className"), inputs={"value": Input(ids.MEETING_TOGGLE, "value")})(on_meeting)
