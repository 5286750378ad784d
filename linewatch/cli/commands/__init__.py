"""One module per subcommand; each exposes run(args) -> exit code. Imported lazily by cli."""
