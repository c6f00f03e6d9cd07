"""Diagnosis: the pipeline from polls to verdicts, the batch of answers it builds, the model
it loads, and how well its verdicts match known answers."""
