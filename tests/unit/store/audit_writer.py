"""A stand-alone writer for the audit tests: `python audit_writer.py STATE_DIR`.

It appends entries as fast as it can, each in its own transaction (as acknowledgements from a
shell or a viewer do), printing "writing" once the first is committed, until it is terminated.
"""

from __future__ import annotations

import sys

from linewatch.store.db import Store


def main() -> None:
    store = Store(sys.argv[1], create=False)
    k = 0
    while True:
        store.audit.append("acknowledged", f"alarm#{k}", {"k": k}, actor="operator")
        if k == 0:
            print("writing", flush=True)
        k += 1


if __name__ == "__main__":
    main()
