"""Simulation of one scenario or many: calculation order and tears (:mod:`.sequencing`), tear
convergence (:mod:`.convergence`), the temperature sweep (:mod:`.engine`), the one evaluation
with a status per scenario (:mod:`.evaluation`), its views — one case with result tables
(:mod:`.results`) and one row per scenario (:mod:`.batch`) — and the benchmark
(:mod:`.benchmark`)."""
