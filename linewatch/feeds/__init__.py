"""Following growing log files: formats, tailing, waking, feed health. No UI imports."""
