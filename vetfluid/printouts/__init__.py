"""What leaves the program on paper or as a file: the treatment sheet, the weight-band
chart and formula-safe CSV exports."""
