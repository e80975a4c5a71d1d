"""The species table view (vetfluid.tables)."""
