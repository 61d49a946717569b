"""demographic-cleaner: puts patient demographics into one standard form,
with a reason code for every change, before records are matched or merged."""

from cleaner.engine import clean, load_rules
from cleaner.options import InvalidInput, Options
from cleaner.rules import RulesError

__all__ = ["clean", "load_rules", "InvalidInput", "Options", "RulesError"]
__version__ = "0.1.0"
