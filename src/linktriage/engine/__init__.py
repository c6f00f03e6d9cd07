"""The diagnosis engine: from polls of a port's counters to a verdict an engineer can audit.

Nothing here knows of the network readers, the bot, the drawers, the transports or the
command line. Its parts, each above the ones it reads:

- ``format``: the snapshot format in (counters, optics, lines, the poll table, packs for the
  store) and the answer format out (the records ``diagnose --json`` writes);
- ``measure``: a window of polls in an engineer's units (deltas, frames, bit error bounds,
  light against thresholds) and how numbers read;
- ``verdicts``, ``physics``, ``guards``, ``links``, ``evidence``: what each verdict means,
  which verdicts a port's readings allow, what is answered before the tree, what both ends
  of a link say together, and the readings each verdict rests on;
- ``simulate``: the physics-based port simulator, the tree's prior and the demo's network;
- ``model``: the tree (its inputs and questions, training, pruning, explaining);
- ``diagnosis``: the pipeline, the batch of answers, the loaded model, and scoring.
"""
