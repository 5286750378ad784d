"""`linewatch alarms` from the shell, as real processes, against a real store."""

from __future__ import annotations

import getpass
import json
import subprocess
import time
from pathlib import Path

import pytest
from store_fixtures import line_with_alarms, linewatch

from linewatch.present.view import SHELVED, UNACKNOWLEDGED
from linewatch.store.db import Store

# The keys the list always had, then those the condition-based alarm model adds, in the
# documented order (README).
KEYS = [
    "id", "kind", "characteristic", "chart", "rule", "first_index", "last_index", "raised_at",
    "state", "priority", "acknowledged_by", "acknowledged_at", "reason", "note", "shelved_until",
    "signals", "episodes", "rules", "below_lsl", "above_usl", "escalated_at",
]


@pytest.fixture
def state(tmp_path: Path) -> Path:
    line_with_alarms(tmp_path / "state")
    return tmp_path / "state"


def test_list_jsonl_open_alarms_with_exact_keys(state: Path) -> None:
    result = linewatch("alarms", "list", "--format", "jsonl", "--state-dir", str(state))
    assert result.returncode == 0, result.stderr
    records = [json.loads(line) for line in result.stdout.splitlines()]
    assert all(list(r) == KEYS for r in records)
    # Most urgent first: out-of-spec (priority 1) before a run rule (priority 3).
    assert [(r["id"], r["kind"], r["priority"]) for r in records] == [
        (3, "out-of-spec", 1), (2, "run-rule", 3)
    ]
    assert records[0]["rule"] == "usl" and records[0]["first_index"] == 1
    assert records[0]["state"] == UNACKNOWLEDGED
    # wall 2.6 > USL 2.4 is one part above USL; 1.9 conforms (LSL 1.8)
    spec, rule = records
    assert (spec["signals"], spec["episodes"], spec["rules"]) == (1, 1, {"usl": 1})
    assert (spec["below_lsl"], spec["above_usl"], spec["escalated_at"]) == (0, 1, None)
    assert (rule["signals"], rule["episodes"], rule["rules"]) == (1, 1, {"we4": 1})
    assert (rule["below_lsl"], rule["above_usl"]) == (None, None)  # not an out-of-spec alarm


def test_list_all_includes_closed(state: Path) -> None:
    result = linewatch("alarms", "list", "--all", "--format", "jsonl", "--state-dir", str(state))
    records = {json.loads(line)["id"]: json.loads(line) for line in result.stdout.splitlines()}
    assert sorted(records) == [1, 2, 3]
    assert records[1]["state"] == "normal"
    assert (records[1]["acknowledged_by"], records[1]["reason"]) == ("setter", "tool wear")


def test_list_text_is_a_table(state: Path, tmp_path: Path) -> None:
    result = linewatch("alarms", "list", "--state-dir", str(state))
    lines = result.stdout.splitlines()
    assert lines[0].split()[:3] == ["ID", "PRI", "STATE"]
    assert [line.split()[0] for line in lines[1:]] == ["3", "2"]
    Store(tmp_path / "empty").close()
    assert linewatch("alarms", "list", "--state-dir", str(tmp_path / "empty")).stdout == (
        "no open alarms\n"
    )


def test_ack_from_the_shell_shows_in_an_open_store_within_a_second(state: Path) -> None:
    with Store(state, create=False) as watcher:  # as an attached screen holds it
        version = watcher.data_version()
        result = linewatch(
            "alarms", "ack", "2", "3", "--reason", "2", "--note", "new lot 4711",
            "--state-dir", str(state), env={"SSH_CLIENT": "192.0.2.7 51234 22"},
        )
        assert result.returncode == 0, result.stderr
        seen = time.monotonic()
        deadline = seen + 1.0
        while watcher.data_version() == version and time.monotonic() < deadline:
            time.sleep(0.05)
        assert watcher.data_version() != version
        alarm = watcher.alarms.get(3)
        assert alarm is not None and alarm.acknowledged
        assert (alarm.acknowledged_by, alarm.acknowledged_from) == (getpass.getuser(), "192.0.2.7")
        assert (alarm.reason, alarm.note) == ("material lot change", "new lot 4711")
        assert watcher.audit.entries()[-1].actor == f"{getpass.getuser()}@192.0.2.7"
        assert watcher.audit.verify().ok


def test_ack_a_whole_characteristic(state: Path) -> None:
    result = linewatch(
        "alarms", "ack", "--characteristic", "wall", "--reason", "Adjustment made",
        "--state-dir", str(state),
    )
    assert result.returncode == 0, result.stderr
    assert "acknowledged 1 alarm of wall" in result.stdout
    with Store(state, create=False) as store:
        assert [a.id for a in store.alarms.open() if a.acknowledged] == [3]


def audit_size(state: Path) -> int:
    with Store(state, create=False) as store:
        return len(store.audit.entries())


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["alarms", "ack", "2", "42", "--reason", "tool wear"], "no alarm with id 42"),
        (["alarms", "ack", "2", "--reason", ""], "a reason is required"),
        (["alarms", "ack", "2", "--reason", "sunspots"], "unknown reason 'sunspots'"),
        (["alarms", "ack", "--reason", "tool wear"], "give the ids"),
        (["alarms", "ack", "2", "--characteristic", "od", "--reason", "1"], "not both"),
        (["alarms", "shelve", "2", "--for", "soon", "--reason", "trial"], "--for: not a duration"),
        (["alarms", "shelve", "2", "--for", "30m", "--reason", ""], "reason is required"),
        (["alarms", "shelve", "1", "--for", "30m", "--reason", "x"], "alarm 1 is closed"),
        (["alarms", "unshelve", "2"], "alarm 2 is not shelved"),
        (["alarms", "ack", "--characteristic", "bor", "--reason", "1"],
         "no characteristic bor (known: "),
        (["alarms", "shelve", "2", "--for", "30", "--reason", "x"], "a duration needs a unit"),
        (["alarms", "shelve", "2", "--for", "13h", "--reason", "x"], "at most 12h"),
        (["alarms", "shelve", "--for", "30m", "--reason", "x"], "give one alarm id or"),
        (["alarms", "shelve", "2", "--characteristic", "od", "--for", "30m", "--reason", "x"],
         "give one alarm id or"),
        (["alarms", "shelve", "--characteristic", "nosuch", "--for", "30m", "--reason", "x"],
         "no characteristic nosuch (known: od, wall)"),
    ],
)
def test_bad_input_is_one_line_exit_2_and_changes_nothing(
    state: Path, args: list[str], message: str
) -> None:
    before = audit_size(state)
    result = linewatch(*args, "--state-dir", str(state))
    assert result.returncode == 2
    assert result.stderr.count("\n") == 1 and message in result.stderr
    assert "Traceback" not in result.stderr
    assert audit_size(state) == before
    with Store(state, create=False) as store:
        assert not store.alarms.get(2).acknowledged  # type: ignore[union-attr]


def test_not_a_state_directory(tmp_path: Path) -> None:
    for args in (["alarms", "list"], ["alarms", "ack", "1", "--reason", "1"], ["audit", "verify"]):
        result = linewatch(*args, "--state-dir", str(tmp_path))
        assert result.returncode == 2
        assert "is not a linewatch state directory" in result.stderr
    assert list(tmp_path.iterdir()) == []  # nothing was created


def test_shelve_and_unshelve(state: Path) -> None:
    result = linewatch(
        "alarms", "shelve", "2", "--for", "1h30m", "--reason", "die change",
        "--state-dir", str(state),
    )
    assert result.returncode == 0, result.stderr
    with Store(state, create=False) as store:
        alarm = store.alarms.get(2)
        assert alarm is not None and alarm.state(time.time()) == SHELVED
        assert abs(alarm.shelved_until - time.time() - 5400) < 60  # type: ignore[operator]
    listed = linewatch("alarms", "list", "--format", "jsonl", "--state-dir", str(state))
    by_id = {json.loads(x)["id"]: json.loads(x) for x in listed.stdout.splitlines()}
    assert by_id[2]["state"] == SHELVED and by_id[2]["shelved_until"]
    assert linewatch("alarms", "unshelve", "2", "--state-dir", str(state)).returncode == 0
    with Store(state, create=False) as store:
        assert [e.action for e in store.audit.entries()[-2:]] == ["shelved", "unshelved"]


def test_state_dir_from_the_config(tmp_path: Path) -> None:
    line_with_alarms(tmp_path / "line-state")
    (tmp_path / "line.toml").write_text(
        '[monitor]\nstate_dir = "line-state"\n'
        '[[characteristic]]\nname = "od"\nreasons = ["die wear", "melt temperature"]\n'
    )
    result = linewatch("alarms", "ack", "2", "--reason", "die wear", "-c",
                       str(tmp_path / "line.toml"))
    assert result.returncode == 0, result.stderr


def test_an_unknown_characteristic_lists_the_known_ones(state: Path) -> None:
    result = linewatch("alarms", "ack", "--characteristic", "bor", "--reason", "1",
                       "--state-dir", str(state))
    assert result.returncode == 2 and "acknowledged" not in result.stdout
    with Store(state, create=False) as store:
        names = {a.characteristic for a in store.alarms.all()}
    assert names and all(name in result.stderr for name in names)
def test_shelve_a_whole_characteristic(state: Path) -> None:
    result = linewatch(
        "alarms", "shelve", "--characteristic", "od", "--for", "30m", "--reason", "die change",
        "--state-dir", str(state),
    )
    assert result.returncode == 0, result.stderr
    assert "od shelved for 30m (1 open alarm" in result.stdout
    listed = linewatch("alarms", "list", "--format", "jsonl", "--state-dir", str(state))
    states = {json.loads(x)["id"]: json.loads(x)["state"] for x in listed.stdout.splitlines()}
    assert states == {2: SHELVED, 3: UNACKNOWLEDGED}  # wall is another characteristic
    with Store(state, create=False) as store:
        shelf = store.alarms.shelf("od", time.time())
        assert shelf is not None and shelf.reason == "die change"
        assert abs(shelf.until - time.time() - 1800) < 60
        assert [e.action for e in store.audit.entries()[-2:]] == ["shelved", "shelved"]


def test_list_text_shows_first_out_rule_episodes_and_counts(state: Path) -> None:
    result = linewatch("alarms", "list", "--state-dir", str(state))
    header, *rows = result.stdout.splitlines()
    assert header.split() == ["ID", "PRI", "STATE", "RAISED", "CHARACTERISTIC", "CHART",
                              "FIRST", "POINTS", "EPISODES", "SIGNALS", "ACK"]
    by_id = {row.split()[0]: row.split() for row in rows}
    # id, priority, state, date, time, characteristic, chart, first-out, points, episodes, counts
    assert by_id["2"][5:] == ["od", "xbar", "we4", "2-2", "1", "we4", "×1"]
    assert by_id["3"][5:] == ["wall", "individuals", "usl", "1-1", "1", "usl", "×1"]


@pytest.mark.parametrize(("clear_after", "episodes"), [(None, 1), ("1", 2), ("2", 1)])
def test_watch_clear_after_sets_when_an_episode_returns(
    tmp_path: Path, clear_after: str | None, episodes: int
) -> None:
    """Beyond-limits firings at points 5 and 7 (one quiet point between, known limits 10 ± 3):
    two episodes with --clear-after 1, one with 2 or the default 8; judged to point 17, the
    alarm has returned in every case."""
    import numpy as np

    from tests.integration.watch.helpers import HEADER, rows_text, start_watch, stop, wait_caught_up

    log = tmp_path / "line.csv"
    values = np.array([10.0] * 5 + [14.0, 10.0, 14.0] + [10.0] * 10)
    log.write_text(HEADER + "".join(rows_text(values)))
    state = tmp_path / "state"
    extra = ["--center", "10", "--sigma", "1", "--rules", "we1"]
    if clear_after is not None:
        extra += ["--clear-after", clear_after]
    proc = start_watch([str(log)], state, *extra, stdout=subprocess.DEVNULL)
    wait_caught_up(state, log)
    stop(proc)
    listed = linewatch("alarms", "list", "--all", "--format", "jsonl", "--state-dir", str(state))
    [alarm] = [json.loads(x) for x in listed.stdout.splitlines()
               if json.loads(x)["chart"] == "individuals"]
    assert (alarm["first_index"], alarm["last_index"], alarm["signals"]) == (5, 7, 2)
    assert (alarm["episodes"], alarm["state"]) == (episodes, "returned-unacknowledged")


@pytest.mark.parametrize(
    ("args", "message"),
    [(["--clear-after", "0"], "--clear-after needs at least 1"),
     (["-c", "{config}"], "characteristic.od.clear_after: must be between 1 and")],
)
def test_a_clear_after_below_1_is_refused_in_one_line(
    tmp_path: Path, args: list[str], message: str
) -> None:
    (tmp_path / "line.csv").write_text("od\n10.0\n")
    config = tmp_path / "c.toml"
    config.write_text('[[characteristic]]\nname = "od"\nclear_after = 0\n')
    result = linewatch("watch", str(tmp_path / "line.csv"), "--center", "10", "--sigma", "1",
                       "--no-ui", "--state-dir", str(tmp_path / "state"),
                       *(a.format(config=config) for a in args))
    assert result.returncode == 2 and result.stderr.count("\n") == 1
    assert message in result.stderr
    assert not (tmp_path / "state").exists()
