"""prismfab.optics."""
