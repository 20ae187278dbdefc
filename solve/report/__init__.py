"""Running a case and writing its outputs: tables, sentences, figures, the HTML report, the folder."""
from .output import write_outputs
from .run import OutputExistsError, RunResult, run_case

__all__ = ["OutputExistsError", "RunResult", "run_case", "write_outputs"]
