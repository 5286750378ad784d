"""A bad config gets one line naming the file, the key and what is wrong; a good one is read
into typed settings with the documented defaults."""

from __future__ import annotations

import subprocess
import sys

import pytest

from linewatch.alarms.policy import DEFAULT_REASONS, offered_reasons, plan_for
from linewatch.config.loading import load_config, parse_config
from linewatch.domain.errors import ConfigError

GOOD = """
[monitor]
stale_after = "15m"
stuck_repeats = 12

[alarms]
hook = ["/usr/local/bin/stack-light", "--red"]
hook_timeout = "3s"

[alarms.priorities]
feed-health = 5

[[feed]]
paths = ["logs/od_*.csv"]
delimiter = ";"

[[characteristic]]
name = "outer-diameter"
column = "od_mm"
lsl = 24.8
usl = 25.2
subgroup_size = 5
rules = ["western-electric", "n3"]
run_lengths = { we4 = 7 }
reaction_plan = "Check the die."
reaction_plans = { we1 = "Stop the puller." }

[[characteristic]]
name = "wall"
subgroup_size = 12
"""


def test_a_good_config_is_read_with_its_defaults(tmp_path):
    path = tmp_path / "line.toml"
    path.write_text(GOOD)
    cfg = load_config(path)
    assert cfg.monitor.stale_after == 900 and cfg.monitor.stuck_repeats == 12
    assert cfg.alarms.hook == ["/usr/local/bin/stack-light", "--red"]
    assert cfg.alarms.hook_timeout == 3
    assert cfg.alarms.priorities["feed-health"] == 5 and cfg.alarms.priorities["out-of-spec"] == 1
    assert cfg.feeds[0].paths == [str(tmp_path / "logs/od_*.csv")]  # relative to the file
    od, wall = cfg.characteristics
    assert od.rules == ["we1", "we2", "we3", "we4", "n3"] and od.run_lengths == {"we4": 7}
    assert plan_for(od, "we1") == "Stop the puller." and plan_for(od, "we2") == "Check the die."
    assert od.effective_dispersion == "range"  # n <= 9 (common practice)
    assert wall.column == "wall" and wall.effective_dispersion == "stdev"  # n >= 10
    assert offered_reasons(wall.reasons, cfg.alarms.reasons) == list(DEFAULT_REASONS)
    assert len(cfg.digest) == 64


@pytest.mark.parametrize(
    ("text", "key", "words"),
    [
        ("[monitor]\nstale_after = 'soon'\n", "monitor.stale_after", "not a duration"),
        ("[monitor]\nbogus = 1\n", "monitor.bogus", "unknown key"),
        ("[[characteristic]]\nname = 'x'\nlsl = 5\nusl = 4\n", "characteristic.x.lsl",
         "below usl"),
        ("[[characteristic]]\nname = 'x'\nsigma = 1\n", "characteristic.x.center", "together"),
        ("[[characteristic]]\nname = 'x'\ncenter = 1\nsigma = 0\n", "characteristic.x.sigma",
         "more than 0"),
        ("[[characteristic]]\nname = 'x'\nrules = 'n9'\n", "characteristic.x.rules",
         "unknown rule"),
        ("[[characteristic]]\nname = 'x'\nsubgroup_size = 30\n",
         "characteristic.x.subgroup_size", "between 1 and 25"),
        ("[[characteristic]]\nname = 'x'\nrun_lengths = { n1 = 3 }\n",
         "characteristic.x.run_lengths", "no length"),
        ("[[characteristic]]\nname = 'x'\n[[characteristic]]\nname = 'x'\n",
         "characteristic.x", "declared twice"),
        ("[[feed]]\npaths = []\n", "feed[0].paths", "at least one"),
        ("[[feed]]\npaths = ['a']\nencoding = 'klingon'\n", "feed[0].encoding",
         "unknown encoding"),
        ("[alarms]\nhook = 'rm -rf /'\n", "alarms.hook", "never a shell command line"),
        ("[alarms.priorities]\nout-of-spec = 0\n", "alarms.priorities.out-of-spec",
         "between 1 and 99"),
        ("[monitor]\naudit_anchor_every = -1\n", "monitor.audit_anchor_every",
         "between 0 and"),
        ("[monitor]\naudit_key_file = 42\n", "monitor.audit_key_file", "must be a string"),
        ("[monitor]\naudit_anchor_syslog = 'loghost'\n", "monitor.audit_anchor_syslog",
         "HOST:PORT"),
        ("[monitor]\naudit_anchor_syslog = 'loghost:70000'\n", "monitor.audit_anchor_syslog",
         "1 to 65535"),
        ("[[characteristic]]\nname = 'x'\ndecimals = 2.5\n", "characteristic.x.decimals",
         "whole number"),
        ("[[characteristic]]\nname = 'x'\ndecimals = 12\n", "characteristic.x.decimals",
         "between 0 and 10"),
        ("[[characteristic]]\nname = 'x'\newma = { lamda = 0.1 }\n",
         "characteristic.x.ewma.lamda", "unknown key"),
        ("[[characteristic]]\nname = 'x'\newma = { lambda = 1.5 }\n",
         "characteristic.x.ewma.lambda", "between 0.01 and 1"),
        ("[[characteristic]]\nname = 'x'\ncusum = { h = 'five' }\n",
         "characteristic.x.cusum.h", "must be a number"),
        ("[[characteristic]]\nname = 'x'\ncusum = { h = 4, headstart = 4 }\n",
         "characteristic.x.cusum.headstart", "below h"),
        ("[[characteristic]]\nname = 'x'\ncusum = 5\n", "characteristic.x.cusum",
         "must be a table"),
        ("this is = = not toml", "(syntax)", ""),
    ],
)
def test_a_bad_config_names_the_file_the_key_and_the_problem(text, key, words):
    with pytest.raises(ConfigError) as err:
        parse_config(text, "line.toml")
    assert err.value.path == "line.toml"
    assert err.value.key == key
    assert words in err.value.problem


def test_the_command_line_reports_a_bad_config_in_one_line_with_exit_2(tmp_path):
    cfg = tmp_path / "bad.toml"
    cfg.write_text("[[characteristic]]\nname = 'od'\nusl = 1\nlsl = 2\n")
    log = tmp_path / "a.csv"
    log.write_text("od\n1\n2\n3\n")
    res = subprocess.run([sys.executable, "-m", "linewatch", "check", str(log), "-c", str(cfg)],
                         capture_output=True, text=True, timeout=60)
    assert res.returncode == 2
    assert res.stderr.strip().splitlines() == [
        f"linewatch: {cfg}: characteristic.od.lsl: must be below usl (2.0 >= 1.0)"
    ]


def test_audit_files_are_taken_from_the_config_folder(tmp_path):
    (tmp_path / "line.toml").write_text(
        '[monitor]\naudit_anchor_file = "trail/anchors.log"\naudit_key_file = "/etc/lw.key"\n'
    )
    mon = load_config(tmp_path / "line.toml").monitor
    assert mon.audit_anchor_file == str(tmp_path.resolve() / "trail" / "anchors.log")
    assert mon.audit_key_file == "/etc/lw.key"
    assert mon.audit_anchor_every == 100  # the default
