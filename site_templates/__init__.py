"""recordkit's templates, assets, JSON Schema, default site configuration and starter files,
shipped as package data (this folder is installed as `recordkit.site_templates`)."""
