"""Printing and the weight-band chart dialog (vetfluid.printouts)."""
