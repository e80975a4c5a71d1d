"""Plan building: the request, the builder, the timed schedule, the safety checks and
what the plan used and found (its ledger); the demo patients."""
