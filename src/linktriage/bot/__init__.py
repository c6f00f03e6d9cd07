"""The bot's work, free of any transport: commands and their parsing, the poll job and the
polls a question needs, lists of suspects and digests, labels from threads, and the jobs."""
