"""Input layer: quantities, the project loader, part models, bill of materials, preferred values."""
