"""Rendering of results: terminal tables, Markdown, self-contained HTML, JSON, figures."""
