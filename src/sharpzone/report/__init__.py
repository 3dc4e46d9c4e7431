"""Renderers only: terminal tables, CSV, JSON, Markdown, HTML, PDF/PNG. They turn results
into text or files and compute nothing of their own."""
