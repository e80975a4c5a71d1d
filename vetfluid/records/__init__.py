"""Keeping the work: patient records (SQLite), plan files, the plan's JSON form and the
work session's states (drafts, versions, what closing asks)."""
