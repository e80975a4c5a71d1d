"""Patient records dialogs (vetfluid.records)."""
