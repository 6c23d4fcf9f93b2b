"""Stage 6 -- answers: one result type, with its text and JSON forms."""
