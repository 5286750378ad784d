"""The one exception tree. Everything linewatch raises on purpose is a `LinewatchError`; the
command line maps each kind to its exit code in one place (`cli.main.exit_code_for`) and shows
one line, never a traceback.

    LinewatchError            a problem the user can fix                      exit 2
      ConfigError             a config file: names the file, the key, the problem
      FeedError               a log cannot be read as a feed (no header, not a file)
      RuleListError           a rule list names an unknown rule or set
      NotEnoughData           too few points to estimate control limits
        BadLimits             limits that are not finite numbers
      ChartDataError          data the chosen chart cannot take (an np chart with varying
                              sizes, more nonconforming units than inspected, a subgroup of 26)
      StoreError              the store cannot be opened or is not a linewatch store
        LeaseLost             this instance no longer collects (another one took over)
      PlantError              the central database cannot be reached or used
"""


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


class FeedError(LinewatchError):
    """A log cannot be read as a feed: not a regular file, no header to go by."""


class RuleListError(LinewatchError, ValueError):
    """A rule list names an unknown rule or set, or a length that makes no sense (a ValueError
    too, so a config reader that catches bad values catches it)."""


class NotEnoughData(LinewatchError):
    """Too few points to estimate control limits."""


class BadLimits(NotEnoughData):
    """Control limits that are not finite numbers (values too extreme to chart); such limits
    never reach the store."""


class ChartDataError(LinewatchError, ValueError):
    """Data the chosen chart cannot take; the message says what and, where one fits, which chart
    would (a ValueError too, so a reader that catches bad values catches it)."""


class StoreError(LinewatchError):
    """The store cannot be opened or is not a linewatch store."""


class LeaseLost(StoreError):
    """This instance no longer holds the lease: another one collects now."""


class PlantError(LinewatchError):
    """The central database cannot be reached or used (its URL is never in the message)."""
