"""Pure, vectorised physics: SI units in and out (temperatures in degC unless a name says _k).

Every function cites its published source in its docstring. No I/O, no clock.
"""
