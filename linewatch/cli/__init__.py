"""The command line: the parser and dispatcher (main), each command's typed options (options) and
the commands themselves (commands/).

Before anything imports numpy, the linear-algebra library is held to one thread unless the user
set it: linewatch's matrices are small, and OpenBLAS's idle worker threads otherwise spin after
each call, which cost `check` about a third more CPU time and an idle screen its wake-ups.
"""

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
