"""One module per subcommand; each exposes run(options) -> exit code, `options` being its typed
record from `linewatch.cli.options`. Imported lazily by `linewatch.cli.main`."""
