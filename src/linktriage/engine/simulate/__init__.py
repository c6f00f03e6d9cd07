"""A physics-based simulator of Ethernet ports in each verdict class.

It is the training prior of the tree and the network behind the demo. Each port is first
described by *parameters* (one row of a DataFrame: speed, medium, load, frame sizes, bit
error ratio, collision and discard ratios, optical readings, which counters the device
reports), drawn within a set of :class:`~.ports.Ranges` (:mod:`.ports`) and turned into a
fault by each verdict's own signature (its module under ``engine/verdicts/``); then
:mod:`.polled` turns parameters into cumulative counters at two or three polls, exactly as
a poller would read them: Counter32 values modulo 2^32, Counter64 modulo 2^64, random
starting values, missing counter groups left out rather than zeroed.

Physics used:

* Frames per second from utilisation and mean frame size, with 20 octets of preamble and
  inter-frame gap per frame on the wire (IEEE 802.3 clause 4.4.2).
* Frame error ratio from bit error ratio: ``FER = 1 - (1 - BER)^bits`` (bits independent),
  with bit error ratios set as multiples of the PHY's IEEE 802.3 objective.
* ``ifInErrors`` is the sum of the dot3 receive errors and ``ifOutErrors`` includes late and
  excessive collisions (RFC 3635 section 3.2.10); symbol errors do not count at 10 Mb/s and
  collisions do not count in full duplex (RFC 3635 object definitions).
* Duplex mismatch: the half-duplex end sees late collisions growing with the load the
  full-duplex end sends; the full-duplex end sees FCS errors and runts growing with the
  load it sends itself (the half-duplex end aborts and jams).
* Optic degradation: bit error ratio climbs steeply as received power falls towards and
  under the module's thresholds (the slope is illustrative). Optical powers are reported as
  SFF-8472 words of 0.1 uW, so they carry its rounding.

What is not evidence is randomised in every class alike, so the tree cannot learn it:
devices without the EtherLike table, with symbol errors absent or stuck at zero, with RMON
only, Counter32 only, with ``ifInErrors`` that also counts non-FCS errors (only beside an
EtherLike table, which tells them apart); media, duplex, top speed and link changes not
reported; transceivers with or without diagnostics and thresholds; any speed, frame size,
load and window. Healthy ports carry the nuisances of real networks: filtering discards
at low load, hosts that send a hundred times what they receive, broadcast-heavy ports, a
single flap, a burst of a few errors after a re-seat, light comfortably in range.
Faults range from the detection limit (a few times the objective, a few dozen events) to
the blatant.

:data:`~.ports.TRAINING` holds the ranges of the packaged model's prior;
:data:`~.ports.SHIFTED` moves every range and nuisance mix outside them, to test that the
verdicts do not follow the prior's particulars.
"""
