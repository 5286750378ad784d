"""Pure computation: constants, charts, limits, run rules, summaries. No I/O, no UI."""
