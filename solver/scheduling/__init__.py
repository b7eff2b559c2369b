"""Cleaning schedules: the train marched through a horizon under a cleaning plan
(:mod:`.horizon`), the plans compared (:mod:`.baselines`) and the plan of least total cost
found (:mod:`.optimiser`, with :mod:`.cycle_milp`)."""
