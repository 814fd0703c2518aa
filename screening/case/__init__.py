"""Text with units <-> SI: unit parsing, the case schema, case files, dotted paths, the SI model."""
