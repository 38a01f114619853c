"""Worksheet, structure edits, undo, the room view and the keys page."""
