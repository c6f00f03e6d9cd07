"""The data the engine reads and writes: the snapshot format's lines and counters, polls held
as columns and packed for the store, and the records of an answer."""
