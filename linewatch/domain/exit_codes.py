"""The exit codes of every linewatch command, in one place (the shell and scripts rely on them)."""

OK = 0
SIGNALS = 1  # `check` found signals; also an unexpected error, as the interpreter itself exits
USAGE = 2  # a LinewatchError: bad option, file, config or store, said in one line
CRASH = 70  # the screen died on an internal error (EX_SOFTWARE of sysexits.h)
INTERRUPTED = 130  # Ctrl-C (128 + SIGINT, the shell's convention)
