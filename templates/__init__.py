"""LaTeX templates of the calculation sheet (jinja2, loaded as package data)."""
