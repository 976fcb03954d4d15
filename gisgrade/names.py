"""Names as people type them: one normaliser and one "did you mean" hint.

Every name the user gives that gisgrade matches against a known list
(project-file sections and keys, choices, vertical units, fitting kinds, pipe
materials) goes through :func:`normalise` where loose matching is wanted, and
an unknown one gets its hint from :func:`suggest`, so every message offers the
nearest known name the same way.
"""
from __future__ import annotations

import difflib

#: How alike (``difflib.SequenceMatcher`` ratio, 0 to 1) a known name must be
#: to a wrong one to be offered as the hint. The ratio is 2 M / T, M the
#: characters matched in order and T both names' lengths together; 0.5 means
#: about half the characters agree, enough to catch a typo or a dropped
#: word ("roughnes", "covers", "gate_valve_opne") while not offering an
#: unrelated name for a word that is nothing like any of them.
CUTOFF = 0.5


def normalise(text, sep: str) -> str:
    """``text`` in lower case, each run of spaces, hyphens and underscores one ``sep``.

    >>> normalise("  Ductile iron_cement-lined ", "-")
    'ductile-iron-cement-lined'
    >>> normalise("US survey-foot", "_")
    'us_survey_foot'
    """
    return sep.join(str(text).lower().replace("-", " ").replace("_", " ").split())


def closest(word, choices) -> str | None:
    """The name in ``choices`` nearest to ``word`` (ratio at least :data:`CUTOFF`), or None.

    >>> closest("roughnes", ["material", "roughness"])
    'roughness'
    >>> closest("depth", ["material", "roughness"]) is None
    True
    """
    near = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=CUTOFF)
    return near[0] if near else None


def suggest(word, choices) -> str:
    """The hint `` (did you mean 'x'?)`` naming the nearest of ``choices``, or ``""``.

    >>> suggest("covers", ["alignment", "cover", "crossings"])
    " (did you mean 'cover'?)"
    >>> suggest("depth", ["alignment", "cover"])
    ''
    """
    near = closest(word, choices)
    return f" (did you mean {near!r}?)" if near else ""
