"""The course: what the planned fluids do to the body over days, the hour-by-hour
timeline, and the observations recorded against the plan."""
