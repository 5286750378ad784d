"""False-alarm budget: the in-control average run length (ARL0) of a set of run rules.

The chart is a location chart with known limits (CL ± 3σ) and independent normal in-control
points; the run starts with no history, so the start-up conventions of `rulebook.py` apply (a
k-of-m window holds all points so far while fewer than m exist). The run length is the number of
points up to and including the first one at which any rule fires.

- `automata`: each zone rule (beyond, side-run, k-of-m, within, mixture) as a small automaton
  over the point's zone (side × level), and the zone probabilities.
- `chain`: the exact Markov chain on the reachable product of those automata, indistinguishable
  states merged; ARL solves (I − Q)·t = 1 (western-electric: 215 states).
- `simulation`: trend and alternation depend on the values' order, not only their zones; any set
  containing them gets a seeded Monte-Carlo estimate using the vectorised evaluator of `rules.py`.
- `rates`: the public `average_run_length` (chain when possible, else the stored or a fresh
  simulation) and the long-run false-alarm rate of a set.

Expected false alarms per 1,000 points are the long-run rate of alarms on a chart that keeps
running (no restart after a signal): an alarm is a maximal stretch of consecutive points at which
one rule fires, so the rate is the sum over the selected rules of the probability that such a
stretch starts at a point (`rates.alarm_rate`), computed exactly. It is not 1000/ARL: a chart
restarted after each signal would count fewer, since rules often fire together or close behind
each other.
"""
