"""Reading a user's text file (peak lists, correlation tables) with one-line errors."""

from __future__ import annotations

from ..errors import InputError

__all__ = ["read_utf8"]


def read_utf8(path: str, what: str) -> str:
    """The text of ``path`` (UTF-8, a byte-order mark allowed); ``what``
    names the file in errors, e.g. ``"peak file"``."""
    try:
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        raise InputError(f"cannot read {what} {path}: {exc.strerror or exc}; check its permissions") from None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{what} {path} is not UTF-8 text; save it as plain text (UTF-8)") from None
