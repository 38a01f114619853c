"""`python -m app.report_worker FOLDER JOB_ID`: build one report job, then exit.

The server starts it (services/exchange/report_jobs.py) so a report's layout runs in a process
of its own, whose memory goes back to the system when it ends. The database comes from
TALLYROOM_DATABASE_URL, which the server sets to its own.
"""

import sys
from pathlib import Path


def main(argv: list[str]) -> int:
    """Build the job named on the command line."""
    # Imported here, not above: the layout processes this one spawns import this module as
    # their main module, and they need none of the app (report_layout.py).
    from app.db.session import get_db_engine
    from app.routes.rendering import templates
    from app.services.exchange.report_build import build_job
    from app.services.exchange.report_layout import exit_with_parent

    if len(argv) != 3:
        print("usage: python -m app.report_worker FOLDER JOB_ID", file=sys.stderr)
        return 2
    exit_with_parent()  # a server that stopped collects no report: stop building it
    build_job(Path(argv[1]), argv[2], engine=get_db_engine(), env=templates.env)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
