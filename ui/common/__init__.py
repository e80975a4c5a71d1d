"""Qt helpers every view uses: error handling, icons, dates, table models, wheel guard,
platform check, help."""
