"""Commands that build and list the archive: ingest, inventory, demo."""
