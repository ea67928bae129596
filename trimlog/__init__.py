"""trimlog: flight-test trim data analysis for light aircraft.

Results are estimates from the user's own flight data; they are not an
approval of any aircraft, loading or modification.
"""

__version__ = "0.1.0"
