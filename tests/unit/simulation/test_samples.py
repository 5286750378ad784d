"""Every recorded sample feed, checked with the real `linewatch check` against its write-up.

The expectations are read from sample_feeds/README.md (the tables people read), so the
documentation and the test cannot drift apart. The samples are invented demo data with causes
placed at known rows (linewatch/simulation/samples.py); what the test asserts is that `check`
finds each documented cause where the construction put it, stays quiet before it, and rejects
exactly the documented junk lines.
"""

from __future__ import annotations

import json
import re
import shlex
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[3]
README = ROOT / "sample_feeds" / "README.md"


@dataclass(frozen=True)
class Documented:
    characteristic: str
    chart: str
    rule: str
    first: int
    last: int
    line_lo: int
    line_hi: int


@dataclass
class Section:
    file: str
    command: list[str]
    expects: list[Documented]
    quiet: dict[str, int]
    rejected: list[int]


def _range(text: str) -> tuple[int, int]:
    lo, hi = re.split(r"[–-]", text.strip())
    return int(lo), int(hi)


def _sections() -> list[Section]:
    text = README.read_text(encoding="utf-8")
    out = []
    for chunk in re.split(r"^## ", text, flags=re.M)[1:]:
        file = chunk.splitlines()[0].strip()
        command = re.search(r"^```\n(linewatch check .*)\n```", chunk, flags=re.M)
        assert command, f"no check command documented for {file}"
        expects = []
        for row in re.findall(r"^\| (?!characteristic|---)(.+) \|$", chunk, flags=re.M):
            cells = [c.strip() for c in row.split("|")]
            first, last = _range(cells[3])
            lo, hi = _range(cells[4])
            expects.append(Documented(cells[0], cells[1], cells[2], first, last, lo, hi))
        quiet_line = re.search(r"^Quiet \(no signal on any chart\): (.*)\.$", chunk, flags=re.M)
        assert quiet_line, f"no quiet stretch documented for {file}"
        quiet = {
            m.group(1): int(m.group(2))
            for m in re.finditer(r"([\w-]+) before point (\d+)", quiet_line.group(1))
        }
        rejected_line = re.search(r"^Rejected lines: (.*)\.$", chunk, flags=re.M)
        rejected = [int(x) for x in rejected_line.group(1).split(",")] if rejected_line else []
        out.append(Section(file, shlex.split(command.group(1)), expects, quiet, rejected))
    return out


SECTIONS = _sections()


def _check(section: Section) -> tuple[int, list[dict]]:
    argv = section.command
    assert argv[:2] == ["linewatch", "check"]
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", *argv[1:]],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=60,
    )
    assert done.returncode in (0, 1), done.stderr
    return done.returncode, [json.loads(line) for line in done.stdout.splitlines() if line]


@pytest.fixture(scope="module", params=SECTIONS, ids=[s.file for s in SECTIONS])
def checked(request) -> tuple[Section, int, list[dict]]:
    section = request.param
    code, records = _check(section)
    return section, code, records


def test_every_sample_is_documented_and_small() -> None:
    # Four layouts, as promised in the README: wide CSV, semicolon CSV, long CSV, JSON lines.
    files = {s.file for s in SECTIONS}
    on_disk = {p.name for p in (ROOT / "sample_feeds").iterdir() if p.name != "README.md"}
    assert files == on_disk
    assert len(files) >= 4
    for name in files:
        assert (ROOT / "sample_feeds" / name).stat().st_size < 200_000
    for s in SECTIONS:
        config = s.command[s.command.index("-c") + 1]
        assert (ROOT / config).is_file()
        assert s.expects


def test_documented_causes_fire_where_documented(checked) -> None:
    section, code, records = checked
    assert code == 1  # signals present: exit 1
    signals = [r for r in records if r["type"] == "signal"]
    for e in section.expects:
        hits = [
            s for s in signals
            if s["characteristic"] == e.characteristic and s["chart"] == e.chart
            and s["rule"] == e.rule and e.first <= s["index"] <= e.last
        ]
        assert hits, f"{section.file}: {e.rule} on {e.characteristic}/{e.chart} not in window"
        assert all(e.line_lo <= s["line"] <= e.line_hi for s in hits), hits


def test_stretch_before_the_first_cause_is_quiet(checked) -> None:
    section, _code, records = checked
    for name, before in section.quiet.items():
        early = [
            r for r in records
            if r["type"] == "signal" and r["characteristic"] == name and r["index"] < before
        ]
        assert not early, f"{section.file}: unexpected early signals {early}"


def test_exactly_the_junk_lines_are_rejected(checked) -> None:
    section, _code, records = checked
    rejected = [r for r in records if r["type"] == "rejected"]
    assert [r["line"] for r in rejected] == section.rejected
    assert all(r["reason"] and Path(r["file"]).name == section.file for r in rejected)
    summaries = [r for r in records if r["type"] == "summary"]
    assert {r["characteristic"] for r in summaries} == {e.characteristic for e in section.expects}
    assert all(r["rejected"] == len(section.rejected) for r in summaries)


def test_samples_match_their_recorded_construction() -> None:
    # The committed files are exactly what the builder makes from the recorded seeds, so the
    # windows in the README describe these bytes.
    from linewatch.simulation.samples import SAMPLES, build, readme_section

    readme = README.read_text(encoding="utf-8")
    for stem in SAMPLES:
        built = build(stem)
        assert (ROOT / "sample_feeds" / built.file).read_bytes() == built.data
        assert readme_section(stem, built) in readme


@pytest.mark.parametrize("path", sorted((ROOT / "config").glob("*.toml")), ids=lambda p: p.name)
def test_every_config_file_loads(path: Path) -> None:
    from linewatch.config.loading import load_config

    config = load_config(path)
    assert config.feeds and config.characteristics


def test_example_config_shows_every_key() -> None:
    # Every key the config model reads appears (set or commented out) in the example.
    from dataclasses import fields

    from linewatch.config.model import (
        ALARM_KINDS,
        AlarmConfig,
        CharacteristicConfig,
        FeedConfig,
        MonitorConfig,
    )

    text = (ROOT / "config" / "linewatch.example.toml").read_text(encoding="utf-8")
    shown = set(re.findall(r"^(?:# )?([\w-]+) = ", text, flags=re.M))
    shown |= set(re.findall(r"^\[[\w]+\.([\w-]+)\]$", text, flags=re.M))  # sub-tables
    for model in (MonitorConfig, AlarmConfig, FeedConfig, CharacteristicConfig):
        missing = {f.name for f in fields(model)} - shown
        assert not missing, f"{model.__name__}: {missing}"
    assert set(ALARM_KINDS) <= shown
