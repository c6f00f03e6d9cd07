"""The bot's work, free of any transport: commands and their parsing, gathering polls,
lists of suspects and digests, labels from threads, and the scheduled jobs."""
