"""One module per sub-command of ``prismfab`` (see ``prismfab.cli``)."""
