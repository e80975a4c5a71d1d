"""The ground floor: errors, units, number formatting, file locations, CSV reading, the
checks every input passes, findings, cautions and molar masses. Imports nothing above it."""
