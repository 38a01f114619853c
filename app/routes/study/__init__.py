"""Study list and overview."""
