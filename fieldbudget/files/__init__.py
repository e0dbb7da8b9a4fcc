"""Files: budget files, NMR measurement files, records (JSON documents of our own)."""
