"""One vocabulary: every display a person reads says the level in the same words.

The words live in one place (bedside.checks.types: ``Level.word``, ``LEVEL_WORDS``);
this greps what the app and ``bedside check``'s table render for the word after each
level symbol, and checks it is one of those words (the HTML report and the BIDS
descriptions: tests/record/test_html_words.py). Our choice ("ours"): the state words
good / check / bad, which read the same in the live view, the table and a report.
"""

from __future__ import annotations

import re
from typing import Any

import standins as si

from bedside.checks.types import LEVEL_SYMBOLS, LEVEL_WORDS, Level
from bedside.commands.check import as_json, as_table
from bedside.ui.app import make_app
from bedside.ui.config import AppConfig
from bedside.ui.screens.help import help_text

#: A level symbol, one space, then a word: the pattern every display uses.
_SAID = re.compile("([" + "".join(LEVEL_SYMBOLS.values()).replace("?", r"\?") + r"]) ([a-z]+)")


def level_words_in(text: str) -> set[tuple[str, str]]:
    """(symbol, word) pairs as written in a rendered display."""
    return {(m.group(1), m.group(2)) for m in _SAID.finditer(text)}


def _allowed() -> set[tuple[str, str]]:
    return {(LEVEL_SYMBOLS[k], w.split()[0]) for k, w in LEVEL_WORDS.items()}


def test_the_words_are_the_keys_and_one_per_level() -> None:
    assert [lv.word for lv in Level] == ["good", "check", "bad"]
    assert len(set(LEVEL_WORDS.values())) == len(LEVEL_WORDS) == 4


def test_check_table_says_the_same_words() -> None:
    table = as_table(as_json(si.frame(), si.identity(), 4.0, lost=False))
    said = level_words_in(table)
    assert ("✖", "bad") in said and ("▲", "check") in said and ("●", "good") in said
    assert said <= _allowed(), said - _allowed()


def test_help_legend_says_the_same_words() -> None:
    said = level_words_in(help_text().plain)
    assert {("●", "good"), ("▲", "check"), ("✖", "bad"), ("?", "no")} <= said
    assert said <= _allowed(), said - _allowed()


async def test_watch_view_says_the_same_words() -> None:
    app = make_app(AppConfig(discover=False), source=si.FixedSource(), services=si.services(frames=[si.frame()]))
    async with app.run_test(size=(120, 40)) as pilot:
        for _ in range(60):
            await pilot.pause(0.05)
            if app.latest_frame is not None:
                break
        await pilot.pause(0.2)
        text: Any = si.screen_text(app)
        said = level_words_in(text)
        assert ("✖", "bad") in said and ("▲", "check") in said, said
        assert said <= _allowed(), said - _allowed()
        assert "fix" not in text.split()
