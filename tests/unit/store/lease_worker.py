"""A stand-alone instance for the lease tests: `python lease_worker.py STATE_DIR NAME`.

It behaves as a watcher does: try to collect every RENEW_EVERY seconds; once collecting, print
"collecting NAME <epoch>" and renew; on SIGTERM release the lease and exit.
"""

from __future__ import annotations

import signal
import sys
import time

from linewatch.store.db import Store
from linewatch.store.lease import RENEW_EVERY, Lease


def main() -> None:
    store = Store(sys.argv[1], create=False)
    lease = Lease(store, sys.argv[2])

    def stop(*_: object) -> None:
        lease.release()
        sys.exit(0)

    signal.signal(signal.SIGTERM, stop)
    print(f"started {sys.argv[2]}", flush=True)
    while not lease.try_acquire():
        time.sleep(RENEW_EVERY)
    print(f"collecting {sys.argv[2]} {time.time()}", flush=True)
    while True:
        time.sleep(RENEW_EVERY)
        if not lease.renew():
            print(f"lost {sys.argv[2]}", flush=True)
            return


if __name__ == "__main__":
    main()
