"""harmonize: make exports from many regions consistent, decided from evidence.

The public API is small:

* ``run(paths, out_dir, plan=..., options=...)``: files and folders in, harmonised files
  and reports out (what ``harmonize apply`` does); returns a ``RunResult`` with the report
  and the plan it used.
* ``harmonize_frame(frame, options=..., plan=...)``: the same for one pandas DataFrame.
* ``Options``: hints and settings; ``Plan``, ``load_plan``, ``save_plan``: decisions kept
  in an editable file.
"""

__version__ = "0.1.0"

from harmonize.options import Options  # noqa: E402  (the modules below read __version__)
from harmonize.pipeline import RunResult, harmonize_frame, run  # noqa: E402
from harmonize.plan import Plan, PlanError  # noqa: E402
from harmonize.plan import load as load_plan  # noqa: E402
from harmonize.plan import save as save_plan  # noqa: E402

__all__ = ["Options", "Plan", "PlanError", "RunResult", "__version__", "harmonize_frame",
           "load_plan", "run", "save_plan"]
