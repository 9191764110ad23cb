"""bearbound: rigorous lower and upper bounds on the collapse load of a strip footing.

Results are for checking by a qualified geotechnical engineer; local codes and
licensed practice govern.
"""
__version__ = "0.1.0"
