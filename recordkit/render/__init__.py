"""Rendering: findings and records -> pages (jinja2 templates in site_templates/)."""
