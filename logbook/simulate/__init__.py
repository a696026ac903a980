"""The bench simulator and the generated demo scenario.

A physical model of each axis (DC motor, drive train, sensors) under a discrete
PID, integrated at a fixed step; the invented demo scenario built on it; and
:func:`write_demo_data`, which writes the demo folder that ``logbook demo`` imports.
Run ``python -m logbook.simulate demo_data`` to regenerate that folder.
"""

from logbook.simulate.bench import BenchRecord, BenchRun, simulate_bench
from logbook.simulate.controller import PidGains
from logbook.simulate.demo import write_demo_data
from logbook.simulate.motor import MotorParams

__all__ = [
    "BenchRecord",
    "BenchRun",
    "MotorParams",
    "PidGains",
    "simulate_bench",
    "write_demo_data",
]
