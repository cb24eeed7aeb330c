"""Who ran what, when: the ``run`` block of a result, for a report a lab can sign.

This is report metadata, not science: nothing here changes a result.  The
block records the date and time of the run (UTC), the elucidate version,
the version of the shipped shift table and, when given, the sample ID and
the names of the analyst and the reviewer::

    "run": {"timestamp_utc": "2026-12-03T09:41:07Z", "elucidate_version": "0.1.0",
            "shift_table_version": "2026-12-02+dfab72eb", "sample_id": "KC-2211",
            "analyst": null, "reviewer": null}

``elucidate solve`` and ``elucidate batch`` take the time just before the
search starts; :func:`elucidate.to_dict` takes it when called unless a time
is given (tests inject a fixed one).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timezone

from ..errors import InputError

__all__ = ["RunInfo", "format_utc"]

_MAX_LEN = 120


def _clean(value, what: str, option: str) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str):
        raise InputError(f"{what} must be text, got {type(value).__name__} ({option})")
    text = value.strip()
    if not text:
        return None
    if len(text) > _MAX_LEN or any(ord(ch) < 32 or ord(ch) == 127 for ch in text):
        raise InputError(f"{what} {value[:40]!r} must be one line of at most {_MAX_LEN} characters ({option})")
    return text


def format_utc(moment: datetime) -> str:
    """ISO 8601 in UTC to the second, e.g. ``2026-12-03T09:41:07Z``."""
    return moment.astimezone(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


@dataclass(frozen=True)
class RunInfo:
    """Date and time of a run plus the optional sample ID and sign-off names.

    Attributes
    ----------
    timestamp : datetime
        When the run started; timezone-aware (stored and shown in UTC).
    sample_id : str or None
        The lab's sample ID (in a batch: the CSV row's id).
    analyst, reviewer : str or None
        Names printed in the report's sign-off block; blank lines when None.

    Raises
    ------
    InputError
        A naive datetime, or a name that is not one line of text.
    """

    timestamp: datetime
    sample_id: str | None = None
    analyst: str | None = None
    reviewer: str | None = None

    def __post_init__(self):
        if not isinstance(self.timestamp, datetime):
            raise InputError(f"run time must be a datetime, got {type(self.timestamp).__name__}")
        if self.timestamp.tzinfo is None or self.timestamp.utcoffset() is None:
            raise InputError("run time must carry a timezone, e.g. datetime(2026, 12, 3, 9, 41, "
                             "tzinfo=timezone.utc)")
        object.__setattr__(self, "timestamp", self.timestamp.astimezone(timezone.utc).replace(microsecond=0))
        object.__setattr__(self, "sample_id", _clean(self.sample_id, "sample ID", "--sample-id"))
        object.__setattr__(self, "analyst", _clean(self.analyst, "analyst name", "--analyst"))
        object.__setattr__(self, "reviewer", _clean(self.reviewer, "reviewer name", "--reviewer"))

    @classmethod
    def now(cls, sample_id: str | None = None, analyst: str | None = None,
            reviewer: str | None = None) -> "RunInfo":
        """A RunInfo stamped with the current time (UTC)."""
        return cls(datetime.now(timezone.utc), sample_id, analyst, reviewer)

    def to_dict(self) -> dict:
        """The ``run`` block: this record plus the tool and shift-table versions."""
        from .. import __version__
        from ..predict.model import default_table_version

        return {
            "timestamp_utc": format_utc(self.timestamp),
            "elucidate_version": __version__,
            "shift_table_version": default_table_version(),
            "sample_id": self.sample_id,
            "analyst": self.analyst,
            "reviewer": self.reviewer,
        }
