"""Every study in one zip archive: one study file each, for moving to another machine.

Each member is the same study file the JSON export writes (schema version 1), so
`tallyroom import` reads each back. The calls into the export area are kept in
`_study_file` only.
"""

import io
import os
import zipfile
from pathlib import Path
from typing import BinaryIO

from sqlmodel import Session, select

from app.db.models import Study

STUDY_FOLDER = "studies"


def _study_file(session: Session, study: Study) -> tuple[str, bytes]:
    """(file name, bytes) of one study's JSON export."""
    from app.services.exchange.exports import ExportFormat, export_filename, study_json_bytes
    from app.services.exchange.study_file import export_study

    assert study.id is not None
    return (export_filename(study, ExportFormat.JSON),
            study_json_bytes(export_study(session, study.id)))


def _readme(names: list[str]) -> str:
    from app.routes.rendering import CAUTIONS

    listing = "\n".join(f"  {STUDY_FOLDER}/{name}" for name in names) or "  (no studies)"
    return (
        "Tallyroom: every study of one database, one study file (JSON, schema version 1) each.\n"
        "Bring one into another Tallyroom with:  tallyroom import FILE.json\n\n"
        f"Studies:\n{listing}\n\nCautions: {CAUTIONS}\n"
    )


def write_all_studies(session: Session, out: Path) -> list[str]:
    """Write every study into the zip `out` (replaced whole at the end); return the names."""
    partial = out.with_name(out.name + ".partial")
    with partial.open("wb") as target:
        names = _write_archive(session, target)
    os.replace(partial, out)
    return names


def all_studies_archive(session: Session) -> tuple[bytes, list[str]]:
    """The same archive in memory, for the "export all studies" page's download."""
    buffer = io.BytesIO()
    names = _write_archive(session, buffer)
    return buffer.getvalue(), names


def _write_archive(session: Session, target: BinaryIO) -> list[str]:
    studies = session.exec(select(Study).order_by(Study.id)).all()  # type: ignore[arg-type]
    names: list[str] = []
    with zipfile.ZipFile(target, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for study in studies:
            name, content = _study_file(session, study)
            archive.writestr(f"{STUDY_FOLDER}/{name}", content)
            names.append(name)
        archive.writestr("README.txt", _readme(names))
    return names
