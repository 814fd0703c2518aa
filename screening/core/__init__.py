"""The physics core: pure SI functions and numerics (numpy and scipy only; no files, units objects or printing)."""
