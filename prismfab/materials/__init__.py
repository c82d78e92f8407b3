"""prismfab.materials."""
