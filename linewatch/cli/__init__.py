"""The command line: the parser and dispatcher (main), each command's typed options (options) and
the commands themselves (commands/)."""
