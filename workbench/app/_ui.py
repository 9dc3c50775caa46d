"""Streamlit-side helpers shared by the pages: store location, case choice, errors, text.

User text is never rendered as Markdown or HTML: every message box, caption
or label that carries text a user typed (or a file or collection holds) goes
through :func:`plain`, which escapes every Markdown-active character, or is
shown with ``st.text`` / a table.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import streamlit as st

from workbench.app import store_access
from workbench.errors import WorkbenchError

__all__ = [
    "CAUTIONS",
    "cautions",
    "choose_case",
    "current_case",
    "guarded_step",
    "load_input_cached",
    "plain",
    "result_cache",
    "shown_errors",
    "store_root",
    "warm_workers",
]

#: The app's own wording of the standing cautions (the sheet prints the library's).
CAUTIONS: tuple[str, ...] = (
    "These results come from an automated comparison of line positions. A qualified examiner "
    "has to review them under the laboratory's accredited procedures before anyone relies on "
    "them.",
    "Detecting an element does not tell you which compound, pigment or product it came from.",
    "Laser (LIBS) and X-ray sources are hazardous: measure only under the laboratory's own "
    "safety procedures and with the interlocks in place.",
)

_MD_ACTIVE = frozenset("\\`*_{}[]()<>#+-.!|~$:&")


def plain(text: Any) -> str:
    """Escape every Markdown/HTML-active character so user text shows literally.

    Links (``[a](http://x)``, bare ``http://x``), images, emphasis, headings,
    HTML tags and LaTeX (``$…$``) all lose their meaning; newlines are kept
    as spaces so one value cannot start a new block.
    """
    out = []
    for ch in "" if text is None else str(text):
        if ch in "\r\n":
            out.append(" ")
        else:
            out.append("\\" + ch if ch in _MD_ACTIVE else ch)
    return "".join(out)


def store_root() -> Path:
    """The case store of this session: chosen once, from --store, $WORKBENCH_STORE or default."""
    if "store_root" not in st.session_state:
        arg = store_access.store_root_from_argv(sys.argv[1:])
        st.session_state["store_root"] = str(store_access.resolve_root(arg))
    return Path(st.session_state["store_root"])


@contextlib.contextmanager
def shown_errors() -> Iterator[None]:
    """Show a workbench error as a box with its remedy instead of a traceback."""
    try:
        yield
    except WorkbenchError as exc:
        st.error(plain(str(exc)), icon=":material/error:")


@contextlib.contextmanager
def guarded_step(step: str) -> Iterator[None]:
    """Like :func:`shown_errors`, and an unexpected library failure in ``step`` is shown too.

    Used around steps that write nothing before they succeed (laying out and
    signing a sheet), so the box can say that nothing was stored.
    """
    try:
        yield
    except WorkbenchError as exc:
        st.error(plain(str(exc)), icon=":material/error:")
    except Exception as exc:  # a lab user gets a message, not a traceback
        st.error(
            plain(
                f"{step} failed unexpectedly ({type(exc).__name__}: {exc}); nothing was stored. "
                "Fix: report this to the workbench maintainers with the case number"
            ),
            icon=":material/error:",
        )


def current_case() -> str | None:
    """Case number chosen in the sidebar (or on the Cases page)."""
    return st.session_state.get("case_number")


def cautions(expanded: bool = False) -> None:
    """Show the standing cautions."""
    with st.expander("Cautions — read before relying on any result", expanded=expanded):
        for c in CAUTIONS:
            st.caption("• " + c)


def choose_case(case_number: str) -> None:
    """Make ``case_number`` the working case (takes effect on the rerun this triggers)."""
    st.session_state["pending_case"] = case_number
    st.session_state["case_number"] = case_number
    st.rerun()


#: Session keys that belong to the current input and its results.
INPUT_KEYS: tuple[str, ...] = (
    "work",
    "work_measurement_id",
    "work_item",
    "view",
    "view_input_sha",
    "outcome_parameters",
    "saved_analysis_id",
    "focus",
    "tracks",
    "run_note",
)


def clear_input() -> None:
    """Forget the current input and everything computed from it.

    Called before a new input is read, so that a read error never leaves the
    old input (or its results) looking current.
    """
    for k in INPUT_KEYS:
        st.session_state.pop(k, None)
    st.session_state["peak_edits"] = []


@st.cache_data(max_entries=4, show_spinner="Reading the input…")
def load_input_cached(data: bytes, name: str, options: tuple[tuple[str, Any], ...]) -> Any:
    """:func:`workbench.app.inputs.load_input`, cached per bytes and options (reruns reuse it)."""
    from workbench.app.inputs import load_input

    return load_input(data, name, **dict(options))


@st.cache_resource
def result_cache() -> Any:
    """The server's :class:`workbench.app.runs.ResultCache` (one for all sessions)."""
    from workbench.app.runs import ResultCache

    return ResultCache()


@st.cache_resource
def warm_workers() -> bool:
    """Start the engine's fork server in the background, once per app server."""
    import threading

    from workbench.app.runs import warm_up

    threading.Thread(target=warm_up, name="workbench-warm-up", daemon=True).start()
    return True
