"""EWMA and tabular CUSUM detectors on a standardised location statistic.

Each detector has one definition (`rulebook.EwmaSpec`, `rulebook.CusumSpec`) and one
arithmetic, evaluated two ways that agree to the last bit: `scan` over a whole chunk with numpy
(history, big live chunks) and `push` one point at a time (live), both from and to a small
JSON-ready state, so any chunking and any save/restore point give the same statistics and
firings. Inputs are standardised points, z = (x − centre)/σ (σ per point where subgroup sizes
vary; `standardise`).

- `ewma`: the EWMA statistic and its exact time-varying limits.
- `cusum`: the two one-sided cumulative sums C⁺, C⁻.
- `detect`: both behind one interface (`DetectorState`, `new_state`, `run`).
"""
