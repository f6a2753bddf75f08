"""bedside: EEG setup at the bedside — marking distances, live signal quality, setup log.

bedside supports the technologist; it does not diagnose and is not a medical device.
"""

__version__ = "0.1.0"
