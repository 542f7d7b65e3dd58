"""Printing to the targets: Verilog-A, the ngspice libraries (B-source and compiled), the datasheet
and the figures they carry."""
