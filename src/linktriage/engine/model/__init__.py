"""The model: the tree artefact and its compiled form, training on the simulated prior,
the yes/no questions it asks, the kept versions, and labels with the learning loop."""
