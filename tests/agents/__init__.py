"""Stand-in devices on loopback for the collector tests and benches: real servers, fixed data."""
