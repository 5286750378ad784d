"""The last-resort exit: registered clean-ups run newest first, once, even when one fails,
and then the process ends with the given code. Run in a child process (it really exits)."""

from __future__ import annotations

import subprocess
import sys
import textwrap


def run_child(body: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-c", textwrap.dedent(body)],
                          capture_output=True, text=True, timeout=60)


def test_clean_ups_run_newest_first_once_and_the_code_is_kept() -> None:
    done = run_child("""
        from linewatch.runtime.exiting import force_exit, on_forced_exit
        on_forced_exit(lambda: print("folder removed", flush=True))
        def broken():
            raise RuntimeError("store busy")
        on_forced_exit(broken)
        on_forced_exit(lambda: print("collector stopped", flush=True))
        forget = on_forced_exit(lambda: print("never", flush=True))
        forget()
        force_exit(129)
        print("after the exit", flush=True)
    """)
    assert done.returncode == 129
    assert done.stdout.splitlines() == ["collector stopped", "folder removed"]


def test_exit_later_ends_a_process_whose_main_thread_is_stuck() -> None:
    done = run_child("""
        import threading
        from linewatch.runtime.exiting import exit_later, on_forced_exit
        on_forced_exit(lambda: print("cleaned", flush=True))
        exit_later(143, 0.2)
        threading.Event().wait()  # the normal way out never comes
    """)
    assert done.returncode == 143 and done.stdout.strip() == "cleaned"
