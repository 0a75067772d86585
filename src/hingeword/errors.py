"""The project's own exceptions.

The library raises these; ``cli.py`` turns them into a one-line ``Error: ...``
message and exit code 1. Anything else that escapes is a bug and shows a traceback.
"""


class HingewordError(Exception):
    """Base class: a problem the user can fix (bad path, unknown class, bad option)."""


class IngestError(HingewordError):
    """The essay folder or manifest cannot be read at all."""


class ModelError(HingewordError):
    """No usable spaCy pipeline."""


class ParseError(HingewordError):
    """A parser process stopped before its essays were parsed (killed, out of memory)."""


class WorkspaceError(HingewordError):
    """The workspace database is missing, too new, or has no such class/term."""


class ReferenceDataError(HingewordError):
    """A reference is missing, corrupt or truncated."""


class RulesError(HingewordError):
    """A rule file is malformed (the loader collects these instead of raising)."""


class ClusterError(HingewordError):
    """A cluster build cannot run: Dask not installed, scheduler unreachable, no or mismatched workers."""
