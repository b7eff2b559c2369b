"""hxtrain.solver.monitoring: steady-state data reconciliation and gross-error detection for plant
data. The numerical core is generic: linear constraints ``A x + B u = c`` or nonlinear (bilinear)
constraints ``g(x, u) = 0`` in measured variables ``x`` and unmeasured variables ``u``, over many
time windows at once. ``observability`` classifies the variables (redundant measurements,
observable unmeasured variables) through the projection that removes the unmeasured ones;
``reconciliation`` holds the weighted least-squares reconciliation, linear and by successive
linearization; ``gross_errors`` holds the global test, the measurement test and serial
elimination. Nothing is imported here: import the modules themselves.
"""
