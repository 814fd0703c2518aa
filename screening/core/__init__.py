"""The physics core: pure SI functions and numerics (numpy, scipy, fluids only; no files, units objects or printing)."""
