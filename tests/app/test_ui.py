"""Tests of workbench/app/_ui.py: user text is shown literally, never as Markdown."""

from __future__ import annotations

import pytest

from workbench.app._ui import plain


@pytest.mark.parametrize(
    "typed, literal",
    [
        ("[click](http://evil.example)", r"\[click\]\(http\://evil\.example\)"),
        ("![x](http://e.example/x.png)", r"\!\[x\]\(http\://e\.example/x\.png\)"),
        ("**bold** <b>x</b>", r"\*\*bold\*\* \<b\>x\</b\>"),
        ("# heading\nnext", r"\# heading next"),  # no new block from a newline
        ("$x^2$", r"\$x^2\$"),  # no LaTeX
    ],
)
def test_markdown_and_html_lose_their_meaning(typed, literal):
    # Escapes per CommonMark's backslash rule (any ASCII punctuation may be escaped).
    assert plain(typed) == literal
