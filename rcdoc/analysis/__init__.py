"""Analysis layer: networks, the nodal engine, spread, metrics, checks and typed results. Never draws."""
