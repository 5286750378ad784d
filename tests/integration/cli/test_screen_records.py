"""The screen's monitor keeps only what it says on leaving: memory stays flat however many
records a shift produces (the screen itself reads everything from the store)."""

from __future__ import annotations

from linewatch.cli.commands.watch import HOOK_PROBLEMS_KEPT, HookProblems


def test_the_screen_keeps_only_the_last_hook_problems_of_a_long_shift() -> None:
    kept = HookProblems()
    for k in range(100_000):  # a shift's worth of signal and limits records
        kept({"type": "signal", "characteristic": "od", "index": k})
        if k % 1000 == 0:
            kept({"type": "hook", "alarm": k, "problem": f"exit 1 at {k}"})
    kept({"type": "hook", "dropped": 3})  # a count of dropped calls is no problem to retell
    assert len(kept.kept) == HOOK_PROBLEMS_KEPT
    assert [m["alarm"] for m in kept.kept] == list(range(80_000, 100_000, 1000))
