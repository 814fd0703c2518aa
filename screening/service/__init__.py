"""heatscreen's HTTP service: the screening functions behind an API and a plain web page.

The service adds no physics of its own: every number comes from the same
functions ``heatscreen check`` and ``heatscreen memo`` use, run in a bounded
pool of worker processes.  Screening estimates only: not a design or
relief-sizing calculation; defer to applicable codes, test data and review by
a licensed or otherwise qualified professional.
"""

CAUTION = ("Screening estimate only: not a design calculation and not a relief- or vent-sizing calculation. "
           "Results defer to the applicable codes and standards, to test data, and to review by a licensed or "
           "otherwise qualified professional. Read the warnings: they are part of the answer.")
