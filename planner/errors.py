"""The one error family of crossplan, and its warning class.

Every error names the field it is about (a path such as
``bands[1].filters[0].freq``), the rule that was broken and the bad value.
The errors subclass :class:`ValueError` so that callers may catch either.
"""

from __future__ import annotations

__all__ = [
    "CrossplanError",
    "ProjectError",
    "DesignError",
    "SpecNotMetError",
    "ExportError",
    "DesignCancelled",
    "ProjectChangedError",
]


class CrossplanError(ValueError):
    """Base class of every error crossplan raises on purpose.

    Parameters
    ----------
    message : str
        What is wrong, with the bad value, e.g. ``"30000 Hz is above
        Nyquist (24000 Hz) for sample_rate 48000"``.
    field : str, optional
        Path of the field concerned, e.g. ``"bands[1].filters[0].freq"``.
        It is prefixed to the message as ``"field: message"``.
    """

    def __init__(self, message: str, field: str | None = None):
        self.message = message
        self.field = field
        super().__init__(f"{field}: {message}" if field else message)

    def at(self, prefix: str) -> "CrossplanError":
        """Return a copy of this error whose field is put below ``prefix``."""
        if not self.field:
            field = prefix
        elif self.field.startswith("["):
            field = prefix + self.field
        else:
            field = f"{prefix}.{self.field}"
        new = type(self).__new__(type(self))
        new.__dict__.update(self.__dict__)
        CrossplanError.__init__(new, self.message, field)
        return new


class ProjectError(CrossplanError):
    """A project file or a project edit is invalid (exit code 2)."""


class DesignError(CrossplanError):
    """A filter cannot be designed from valid-looking parameters."""


class SpecNotMetError(DesignError):
    """A design specification cannot be met within the allowed limits.

    Raised instead of returning a filter that silently misses its spec.
    """


class ExportError(CrossplanError):
    """An export cannot be made as asked (rate, format, arithmetic)."""


class DesignCancelled(DesignError):
    """A long design was stopped because the caller's ``cancel`` returned True.

    Raised through :mod:`planner.progress` when the command line gets Ctrl-C
    or the editor's user presses Escape; no filter was made.
    """


class ProjectChangedError(ProjectError):
    """The project file changed on disk since it was loaded, so saving would lose that change.

    Raised by :func:`planner.project.save` when given the fingerprint taken at
    load (``expect``) and the file now differs; nothing is written. The
    caller decides: save anyway (``force``), save elsewhere, or leave it.

    Attributes
    ----------
    path : str
        The file.
    expected, found
        The fingerprints (:class:`planner.project.Fingerprint`) taken at
        load and now; ``found`` is None when the file is gone.
    """

    def __init__(self, message: str, field: str | None = "file", path: str = "",
                 expected=None, found=None):
        super().__init__(message, field)
        self.path = path
        self.expected = expected
        self.found = found
