"""Many series at once: replicate groups, plates, batch fits on one machine or on Dask.

The entry points:

- :func:`load_batch` / :func:`from_series`: a :class:`BatchData` (series and their groups).
- :func:`fit_batch`: every chosen form fitted to every series -> :class:`BatchResult`;
  :func:`rows` turns it into one table row per series and form.
- :func:`group_summary`: mean, SD and 95% interval of each constant per group.
- :func:`pooled_fit`, :func:`joint_fit`: fits of several series with shared constants.
- :func:`group_difference_test`: the extra-sum-of-squares F test of whether groups differ in one constant.
"""

from __future__ import annotations

from growthcore.batch.dataset import BatchData, from_series, load_batch
from growthcore.batch.ftest import GroupDifferenceTest, difference_test_for_batch, group_difference_test
from growthcore.batch.groups import groups_from_conditions, groups_from_pattern
from growthcore.batch.plate import parse_well, plate_format, well_name
from growthcore.batch.pooled import JointFit, joint_fit, pooled_fit
from growthcore.batch.runner import DEFAULT_CHUNK, ENGINES, BatchResult, SeriesFit, fit_batch
from growthcore.batch.summary import GroupParameterSummary, group_summary
from growthcore.batch.table import rows

__all__ = [
    "BatchData", "BatchResult", "DEFAULT_CHUNK", "ENGINES", "GroupDifferenceTest", "GroupParameterSummary",
    "JointFit", "SeriesFit", "difference_test_for_batch", "fit_batch", "from_series", "group_difference_test",
    "group_summary", "groups_from_conditions", "groups_from_pattern", "joint_fit", "load_batch", "parse_well",
    "plate_format", "pooled_fit", "rows", "well_name",
]
