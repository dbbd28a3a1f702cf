"""Required reinforcement at every station for every combination, and the self-check of a
provided layout, one module per member family (ACI 318-19)."""
