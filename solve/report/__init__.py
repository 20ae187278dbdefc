"""Running a case and writing its outputs: tables, sentences, figures, the HTML report, the folder."""
from .output import OutputExistsError, write_outputs
from .records import RunResult
from .run import run_case

__all__ = ["OutputExistsError", "RunResult", "run_case", "write_outputs"]
