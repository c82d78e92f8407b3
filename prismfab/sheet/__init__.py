"""prismfab.sheet."""
