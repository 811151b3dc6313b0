"""Pure domain: rocket equation, craft model, entries, replay and capability. No I/O, no clock."""
