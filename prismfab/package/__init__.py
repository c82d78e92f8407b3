"""prismfab.package."""
