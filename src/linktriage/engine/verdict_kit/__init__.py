"""What verdicts are built from: the declaration every verdict module fills, the readings
verdicts cite as evidence, and both ends of a link as a link judge reads them."""
