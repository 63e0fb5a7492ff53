"""The invented demo plant (every company, person, machine and number is made up)."""
