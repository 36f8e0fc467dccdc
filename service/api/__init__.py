"""The HTTP layer: parses, calls the core, formats. No physics here."""
