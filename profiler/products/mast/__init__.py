"""Mast height: the closed-form clearance bound, the margin search, the cheapest split, the result."""
