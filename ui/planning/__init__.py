"""The planner's views and its session (vetfluid.planning): patient, plan settings,
findings, provenance."""
