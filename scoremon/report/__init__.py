"""Renderings of result records for people (terminal) and for pipelines (JSON, Markdown)."""
