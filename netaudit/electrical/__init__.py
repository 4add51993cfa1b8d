"""Pure arithmetic for bus lines: limits per bus mode and the pull-up budget.

No I/O and no design objects here: SI floats in, SI floats out, each limit and equation
citing its published source beside it.
"""
