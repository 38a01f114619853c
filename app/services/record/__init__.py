"""The session record: actions, attendance, the change log, revisions and their comparison."""
