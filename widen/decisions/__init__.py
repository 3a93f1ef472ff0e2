"""Reviewer decisions: the records and snapshot the core reads (`decision`), the store interface
(`backend`) and its SQLite and PostgreSQL backends, and the function that picks one (`open_store`)."""
