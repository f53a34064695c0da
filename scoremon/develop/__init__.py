"""Model development: from a development table to a spec (binning, WoE, fitting, selection)."""
