"""Estimate rounds: the facilitator's pages, the participants' page and the room's join code."""
