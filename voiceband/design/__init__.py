"""The design bench: a chain's response and intelligibility, comparing chains on speech, sweeping cutoffs.

* :mod:`.speech` -- the speech a design is judged with (standard, or a talker's own recording).
* :mod:`.evaluate` -- ``voiceband chain``: response, edges, ripple, SII in quiet and with channel noise,
  occupied bandwidth, a measured response held against the design.
* :mod:`.compare` -- ``voiceband compare``: chains run on the same speech audio and tabulated.
* :mod:`.sweep` -- ``voiceband sweep``: cutoff grid scored with the band-gain SII model, Pareto front.

Importing this package needs only numpy.
"""
