"""pourheat model: temperature forecasts for curing mass concrete, usable without a web server.

The public entry point is :func:`model.solver.forecast` (or :class:`model.solver.ThermalSolver`),
which takes a :class:`model.scenario.Scenario` and returns a :class:`model.results.Forecast`.
"""
