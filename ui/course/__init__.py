"""The timeline and course views with their plot items (vetfluid.course)."""
