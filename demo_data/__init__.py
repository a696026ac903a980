"""Demo bench data (simulated captures, profiles, specs, scenario.json).

Shipped in the wheel as ``logbook.demo_data``; regenerate with ``logbook demo --regenerate``.
"""
