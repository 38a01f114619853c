"""The worksheet: node page, field edits, structure and undo, the ladder, the room view."""
