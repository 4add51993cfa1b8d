"""netaudit: audit the I2C and SMBus buses of a KiCad design.

netaudit flags risks; it does not certify a design.
"""

__version__ = "0.1.0"
