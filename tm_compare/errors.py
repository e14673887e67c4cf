"""Named exceptions raised by tm_compare.

Every message names the file, column, parameter or value at fault, says what
would be accepted, and how to fix it. The CLI turns these into one-line
``Error: ...`` messages.
"""


class TmCompareError(Exception):
    """Base class of every error tm_compare raises on purpose."""


class InputError(TmCompareError, ValueError):
    """Input data (a file, a column, a value) cannot be used as given."""


class CorpusError(InputError):
    """A corpus file or frame is missing columns or has unusable values."""


class SettingsError(InputError):
    """A parameter has a value outside what is accepted."""


class UsageError(SettingsError):
    """The command line cannot be parsed (unknown command, missing or malformed flag)."""


class ProjectError(TmCompareError):
    """A project folder is missing, unreadable, or from an incompatible version."""


class CorruptArtifactError(ProjectError):
    """A stored artefact fails its integrity check (it is not loaded)."""


class SweepError(TmCompareError):
    """A sweep of fits cannot run as asked."""


class ClusterUnavailableError(SweepError):
    """A Dask scheduler did not answer."""


class ComparisonError(InputError):
    """A comparison between sources cannot be computed from the given data."""


class LabelStoreError(TmCompareError):
    """The label store cannot be opened, read or written."""


class LabelConflictError(LabelStoreError):
    """A label edit was based on a version that is no longer current."""


class ReadOnlyStoreError(LabelStoreError):
    """The label store is on read-only media or was opened for reading only; writes are refused."""


class StoreVersionError(LabelStoreError):
    """The label store was written by a newer version of tm_compare."""


class MissingDependencyError(TmCompareError, ImportError):
    """An optional dependency is not installed."""
