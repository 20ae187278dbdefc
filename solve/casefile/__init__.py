"""Case files: reading and checking the YAML layout of a design study (schema, lines, messages)."""
from .reader import load_case, parse_case
from .schema import Case
from .yaml_lines import CaseError, CaseProblem

__all__ = ["Case", "CaseError", "CaseProblem", "load_case", "parse_case"]
