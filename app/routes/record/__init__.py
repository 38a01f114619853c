"""Actions, attendance, change log, revisions."""
