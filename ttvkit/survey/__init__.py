"""Many targets at once: one diagnosis each, on dask.distributed, resumable, with one summary.

A survey is a manifest (or a folder) of targets, each a timing table and a
system file.  :func:`run_survey` diagnoses every target as one task on an
executor (a dask ``LocalCluster`` by default), writes each target's report
folder exactly as :func:`ttvkit.pipeline.run_diagnosis` would, and then one
summary: ``summary.ecsv``, a pandas DataFrame and ``index.html`` with an O−C
thumbnail per target.  A survey killed at any moment and run again skips the
finished targets and ends with every target exactly once.
"""

from ttvkit.survey.manifest import OPTION_COLUMNS, SurveyTarget, load_targets, read_manifest, targets_from_folder
from ttvkit.survey.run import MARKER, SurveyRun, run_survey, start_local_cluster
from ttvkit.survey.task import read_target

__all__ = ["run_survey", "SurveyRun", "SurveyTarget", "read_manifest", "targets_from_folder", "load_targets",
           "read_target", "OPTION_COLUMNS", "MARKER", "start_local_cluster"]
