"""The built-in potential families, one module each (see DEVELOPERS.md, "Adding a potential")."""
