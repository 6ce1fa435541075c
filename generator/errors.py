"""Exception tree of the package.

Every error the package raises on purpose derives from :class:`SunrecoilError`.
Errors caused by bad user input also derive from :class:`ValueError` so that generic
callers can catch them; the CLI maps :class:`InputError` to exit status 2.
"""

from __future__ import annotations

__all__ = ["SunrecoilError", "InputError", "ConfigError", "DataFileError", "OutputExistsError",
           "WriteError", "SamplingError"]


class SunrecoilError(Exception):
    """Base class of all errors raised on purpose by sunrecoil."""


class InputError(SunrecoilError, ValueError):
    """Bad user input (configuration, data file, argument). CLI exit status 2."""


class ConfigError(InputError):
    """An invalid configuration value; the message names the key path, value and what is allowed."""


class DataFileError(InputError):
    """A user-supplied data file (spectrum table, run list) is unreadable or malformed."""


class OutputExistsError(InputError):
    """The output file exists and overwriting was not requested."""


class WriteError(SunrecoilError):
    """Writing the output failed (disk full, I/O error, read-only file system). Exit status 1."""


class SamplingError(SunrecoilError, RuntimeError):
    """An internal consistency check of the event sampler failed; the run stops. CLI exit 1."""
