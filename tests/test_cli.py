"""The `tallyroom export` and `tallyroom import` commands, called as the shell calls them."""

import json
from pathlib import Path

import pytest
from sqlmodel import Session, select

from app.cli import main
from app.db.models import Study
from app.routes.rendering import CAUTIONS
from app.services.exchange.export_tables import computed_figures
from app.services.exchange.exports import study_json_bytes
from app.services.exchange.study_file import export_study
from app.services.study.tree import load_study_tree
from app.settings import get_settings
from tests.factories import make_scenario_tree, make_study
from tests.samples import free_the_title, study_count


@pytest.fixture
def study(session: Session) -> Study:
    """A one-scenario study."""
    scenario = make_scenario_tree(session, title="Command line check (invented)")
    found = session.get(Study, scenario.study_id)
    assert found is not None
    return found


@pytest.mark.parametrize(("fmt", "magic"), [
    ("xlsx", b"PK"), ("csv", b"\xef\xbb\xbfScenario,"), ("json", b"{"), ("pdf", b"%PDF-"),
])  # fmt: skip
def test_export_writes_the_chosen_format_to_the_named_file(
    study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str], fmt: str, magic: bytes
) -> None:
    out = tmp_path / f"study.{fmt}"
    assert main(["export", str(study.id), "--format", fmt, "--out", str(out)]) == 0
    assert out.read_bytes().startswith(magic)
    assert capsys.readouterr().out.startswith(f"wrote {out} (")


def test_export_finds_a_study_by_its_exact_title_and_writes_the_study_file(
    session: Session, study: Study, tmp_path: Path
) -> None:
    out = tmp_path / "by-title.json"
    assert main(["export", study.title, "--format", "json", "--out", str(out)]) == 0
    expected = {**export_study(session, study.id or 0), "cautions": CAUTIONS,
                "computed_figures": computed_figures(load_study_tree(session, study.id or 0))}
    assert out.read_bytes() == study_json_bytes(expected)


def test_export_without_out_uses_the_download_name_in_the_current_folder(
    study: Study, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    assert main(["export", str(study.id), "--format", "csv"]) == 0
    assert [p.name for p in tmp_path.iterdir()] == [
        f"tallyroom-{study.id}-command-line-check-invented.csv"
    ]


@pytest.mark.parametrize("key", ["999", "No such title", "command line check (invented)"])
def test_export_of_an_unknown_study_says_so_and_exits_2(
    study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str], key: str
) -> None:
    out = tmp_path / "never.json"
    assert main(["export", key, "--format", "json", "--out", str(out)]) == 2
    assert capsys.readouterr().err == (
        f"tallyroom export: There is no study with id or exact title '{key}'.\n"
    )
    assert not out.exists()


def test_export_of_an_ambiguous_title_asks_for_the_id(
    session: Session, study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    twin = make_study(session, title=study.title)
    assert main(["export", study.title, "--format", "json", "--out",
                 str(tmp_path / "x.json")]) == 2
    assert capsys.readouterr().err == (
        f"tallyroom export: 2 studies are titled '{study.title}' (ids {study.id}, {twin.id}); "
        f"give the id instead.\n"
    )


def test_export_refuses_an_unknown_format(study: Study, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as exit_info:
        main(["export", str(study.id), "--format", "docx"])
    assert exit_info.value.code == 2
    assert "invalid choice: 'docx'" in capsys.readouterr().err


def test_import_prints_the_new_id_and_the_new_study_exports_the_same_file(
    session: Session, study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    original = study_json_bytes(export_study(session, study.id or 0))
    path = tmp_path / "study.json"
    path.write_bytes(original)
    free_the_title(session, study)
    assert main(["import", str(path)]) == 0
    new_id = int(capsys.readouterr().out)
    assert new_id != study.id
    assert study_json_bytes(export_study(session, new_id)) == original


def test_import_of_an_invalid_file_says_why_exits_2_and_writes_nothing(
    session: Session, study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    data = export_study(session, study.id or 0)
    data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"][0]["value"] = -1
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    assert main(["import", str(path)]) == 2
    assert capsys.readouterr().err == (
        f"tallyroom import: {path} not imported: "
        "nodes.0.deviations.0.scenarios.0.steps.0.value: Input should be greater than 0\n"
    )
    assert study_count(session) == 1


def test_import_of_a_file_over_the_size_limit_is_refused_before_it_is_read(
    session: Session, study: Study, tmp_path: Path, capsys: pytest.CaptureFixture[str],
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    path = tmp_path / "study.json"
    path.write_bytes(study_json_bytes(export_study(session, study.id or 0)))
    limit = path.stat().st_size - 1
    monkeypatch.setattr(get_settings(), "max_import_bytes", limit)
    monkeypatch.setattr(Path, "read_bytes", lambda _path: pytest.fail("the file was read"))
    assert main(["import", str(path)]) == 2
    assert capsys.readouterr().err == (
        f"tallyroom import: {path} not imported: the file is larger than {limit:,} bytes, the "
        f"most a study file may be\n"
    )
    assert study_count(session) == 1


def test_import_of_a_missing_file_exits_2(
    session: Session, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    missing = tmp_path / "absent.json"
    assert main(["import", str(missing)]) == 2
    assert capsys.readouterr().err == (
        f"tallyroom import: cannot read {missing}: No such file or directory\n"
    )
    assert study_count(session) == 0


def test_delete_study_without_yes_deletes_nothing_and_says_what_it_would_delete(
    session: Session, study: Study, capsys: pytest.CaptureFixture[str]
) -> None:
    assert main(["delete-study", str(study.id)]) == 2
    said = capsys.readouterr().err
    assert f"would delete study {study.id} 'Command line check (invented)'" in said
    assert "1 scenarios" in said and "repeat with --yes" in said
    assert study_count(session) == 1


def test_delete_study_with_yes_removes_the_study_and_everything_it_holds(
    session: Session, demo_study: Study, study: Study, capsys: pytest.CaptureFixture[str]
) -> None:
    from app.db.models import ChangeLogEntry, Revision, Scenario, Step
    from app.services.record.revisions import freeze_revision

    doomed, kept = demo_study.id, study.id
    freeze_revision(session=session, study_id=doomed or 0, frozen_by="T",
                    values={"label": "A", "note": "", "signed_off_by": "T"})
    assert main(["delete-study", demo_study.title, "--yes"]) == 0
    assert capsys.readouterr().out.startswith(f"deleted study {doomed} ")
    session.expunge_all()
    assert session.get(Study, doomed) is None and study_count(session) == 1
    for model in (Scenario, Step, ChangeLogEntry, Revision):
        rows = session.exec(select(model).where(model.study_id == doomed)).all()
        assert rows == [], model.__name__
    assert session.exec(select(Scenario).where(Scenario.study_id == kept)).all() != []


def test_delete_study_of_an_unknown_study_is_refused(capsys: pytest.CaptureFixture[str],
                                                     session: Session) -> None:
    assert main(["delete-study", "4711", "--yes"]) == 2
    assert "no study with id or exact title '4711'" in capsys.readouterr().err
