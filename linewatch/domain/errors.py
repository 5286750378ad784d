"""Exceptions that the command line turns into one-line messages and exit code 2."""


class LinewatchError(Exception):
    """A problem the user can fix (bad option, bad file, bad config); shown without a traceback."""


class ConfigError(LinewatchError):
    """A configuration file is invalid; the message names the file, the key and the problem
    (no key when the file itself cannot be read)."""

    def __init__(self, path: str, key: str, problem: str) -> None:
        super().__init__(f"{path}: {key}: {problem}" if key else f"{path}: {problem}")
        self.path = path
        self.key = key
        self.problem = problem


class NotEnoughData(LinewatchError):
    """Too few points to estimate control limits."""


class BadLimits(LinewatchError):
    """Control limits that are not finite numbers (values too extreme to chart); such limits
    never reach the store."""
