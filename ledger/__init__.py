"""propledger: a propellant and delta-v ledger for spacecraft operations."""
__version__ = "0.1.0"
