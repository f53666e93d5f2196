"""Renderers: findings -> tables -> text, Markdown and the run folder."""
