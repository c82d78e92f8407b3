"""prismfab.drawing."""
