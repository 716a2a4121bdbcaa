"""Errors caused by the user's input. Every one becomes exit code 2 and one line on stderr."""


class ClearwayError(Exception):
    """Base for every error caused by the user's input."""


class DrawingError(ClearwayError, ValueError):
    """The drawing is unreadable or has nothing usable."""


class ConfigError(ClearwayError, ValueError):
    """An option or the config file is invalid."""


class GraphFileError(ClearwayError, ValueError):
    """A GraphML file is not one clearway wrote, or is unsafe to read."""


class LimitError(ClearwayError, ValueError):
    """The input would need more work or memory than a configured limit allows."""
