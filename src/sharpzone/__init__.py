"""sharpzone: which frames of a shoot held the subject inside the zone of acceptable
sharpness, why not, and what would have worked."""

__version__ = "0.1.0"
