"""vetfluid's Qt front end: a thin layer over the headless core in ``vetfluid``."""
