"""Physiology calculators: maintenance, hydration and deficits, electrolytes, resuscitation,
and how fluid is delivered (pumps, drops, divided doses). Each a pure function of the tables."""
