"""Renderers of a report document: Markdown, self-contained HTML and terminal tables."""
