"""Error types shared by the whole package.

``InputError`` marks a problem with what the user gave us (a bad formula, a
malformed peak file, inconsistent data, an unknown option value).  The
command line turns it into one line ``error: ...`` on stderr and exit code 2.
Anything else that escapes is a bug and keeps its traceback.

Messages follow one pattern: say what was received, what is wrong with it,
and how to fix it.
"""

__all__ = ["InputError"]


class InputError(ValueError):
    """A user-facing input problem; the message must say how to fix it."""
