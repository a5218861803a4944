"""The liquid mixture around a blend: drying path and flash point."""
