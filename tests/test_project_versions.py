"""Format versions: an older file is migrated in memory and says so, a newer one is refused;
unknown keys at every level survive a save and a load."""

import json

import pytest

from planner import project
from planner.cli import main
from planner.errors import ProjectError


@pytest.fixture
def version_2(monkeypatch):
    """This crossplan as if it read format version 2, whose step from 1 renames a band key.

    Version 1 is the first version of the format, so no real migration exists yet; the
    step here exercises the machinery that the next format change will use.
    """
    def step(d):
        d = dict(d)
        d["bands"] = [{**{k: v for k, v in b.items() if k != "level_db"},
                       "gain_db": b.get("level_db", 0.0)} for b in d["bands"]]
        return d

    monkeypatch.setattr(project, "VERSION", 2)
    monkeypatch.setattr(project, "MIGRATIONS", {1: step})


def test_an_older_version_is_migrated_and_says_so(example, version_2):
    example["bands"][1]["level_db"] = example["bands"][1].pop("gain_db")
    notices = []
    p = project.from_dict(example, notices=notices)
    assert p.bands[1].gain_db == -2.5
    assert len(notices) == 1 and "\n" not in notices[0]
    assert notices[0].startswith("version: the file is format version 1; read as version 2")


def test_a_migrated_project_is_saved_in_the_current_version(example, version_2, tmp_path):
    path = tmp_path / "p.json"
    project.save(project.from_dict(example), path)
    assert json.loads(path.read_text())["version"] == 2


def test_migrating_leaves_the_parsed_input_alone(example, version_2):
    example["bands"][1]["level_db"] = example["bands"][1].pop("gain_db")
    before = json.dumps(example, sort_keys=True)
    project.from_dict(example)
    assert json.dumps(example, sort_keys=True) == before


def test_the_current_version_gives_no_notice(example):
    notices = []
    project.from_dict(example, notices=notices)
    assert notices == []


def test_cli_prints_the_migration_notice_in_one_line(example, version_2, write_project,
                                                    capsys):
    path = write_project(example)
    main(["check", str(path)])          # the example's sum fails below 35 Hz: exit 1
    err = [line for line in capsys.readouterr().err.splitlines() if line]
    assert err == [next(e for e in err if e.startswith("crossplan: notice: version: "))]


def test_newer_version_is_refused_with_field_value_and_highest(example):
    example["version"] = 7
    with pytest.raises(ProjectError, match=r"^version: 7 is newer than this crossplan reads "
                                           r"\(1\); update crossplan to open it$"):
        project.from_dict(example)


def test_cli_refuses_a_newer_version_with_exit_2(example, write_project, capsys):
    example["version"] = 3
    assert main(["check", str(write_project(example))]) == 2
    assert "version: 3 is newer than this crossplan reads (1)" in capsys.readouterr().err


def test_a_version_older_than_the_oldest_step_is_refused(example, monkeypatch):
    monkeypatch.setattr(project, "VERSION", 3)
    monkeypatch.setattr(project, "MIGRATIONS", {2: lambda d: d})
    with pytest.raises(ProjectError, match=r"^version: 1 is older than this crossplan reads "
                                           r"\(2 to 3\)$"):
        project.from_dict(example)


@pytest.mark.parametrize("bad", [0, -1])
def test_version_below_1_is_refused(example, bad):
    example["version"] = bad
    with pytest.raises(ProjectError, match=rf"^version: {bad} is not a valid version"):
        project.from_dict(example)


@pytest.mark.parametrize("bad", ["1", 1.0, True, None])
def test_version_must_be_a_whole_number(example, bad):
    example["version"] = bad
    with pytest.raises(ProjectError, match=r"^version: must be a whole number"):
        project.from_dict(example)


def test_nested_unknown_keys_survive_save_and_load(example, tmp_path):
    junk = {"a": [1, {"b": None, "c": [True, "x"]}], "d": {"e": {"f": 1.5}}}
    example["plugin"] = junk
    example["analysis"]["future"] = {"smoothing": junk}
    example["bands"][0]["placement"] = {"room": junk}
    example["bands"][1]["filters"][1]["meta"] = {"why": junk}
    example["acoustics"] = {"distance_m": 2, "room": junk}
    path = tmp_path / "p.json"
    project.save(project.from_dict(example), path)
    project.save(project.load(path), path)              # twice: nothing is lost on the way
    out = json.loads(path.read_text())
    assert out["plugin"] == junk
    assert out["analysis"]["future"] == {"smoothing": junk}
    assert out["bands"][0]["placement"] == {"room": junk}
    assert out["bands"][1]["filters"][1]["meta"] == {"why": junk}
    assert out["acoustics"]["room"] == junk
