"""prismfab.design."""
