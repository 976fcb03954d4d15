"""The one exception type that reaches the user as a one-line message.

Every problem with what the user gave us (a file, a key, a value) raises
:class:`InputError`. The CLI prints ``gisgrade: error: <message>`` and exits
with status 2; anything else is a bug and keeps its traceback.
"""


class InputError(Exception):
    """Bad input: the message names the file, key or value at fault."""

    def __init__(self, message: str):
        # One line, always: the CLI promises a single-line error.
        super().__init__(" ".join(str(message).split()))


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (its type name if it has none),
    for quoting a library's error inside our one-line message."""
    text = str(exc).strip().splitlines()
    return text[0] if text else type(exc).__name__


def some_of(items, limit: int) -> str:
    """The first ``limit`` of ``items`` for a message, and how many more.

    >>> some_of(["a", "b", "c"], 4), some_of(["a", "b", "c"], 2)
    ('a, b, c', 'a, b and 1 more')
    """
    items = [str(i) for i in items]
    more = f" and {len(items) - limit} more" if len(items) > limit else ""
    return ", ".join(items[:limit]) + more
