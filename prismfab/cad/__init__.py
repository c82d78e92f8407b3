"""prismfab.cad."""
