"""Species and fluid tables with their sources, the user's overrides, and the limits and
roles the plan is checked against (what every calculator reads)."""
