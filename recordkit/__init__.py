"""recordkit: maintenance and test records for smoke, CO and heat alarms and listening nodes."""

__version__ = "0.1.0"
