"""The configuration: typed records (model), the TOML reader (loading), the closed sets of words
(choices), the command-line chart overrides and which characteristics to chart (selection)."""
