"""compactgen: physics parameters -> sympy behavioural equations -> Verilog-A and ngspice
subcircuits, proved against a reference ODE solution by running the simulators."""

__version__ = "0.1.0"
