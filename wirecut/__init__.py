"""wirecut: plans hot-wire cutting of EPS casting molds.

From a mesh of a free-form casting surface: where a straight wire can cut it within tolerance,
the wire direction, the pieces that fit the stock and the machine, a ruled cut per piece,
two-tower G-code with kerf and lag compensation, DXF outlines, a report, and a replay of the
written G-code that measures the error it will actually make.
"""

from wirecut.config import JobProfile, Policy, default_job, load_job
from wirecut.errors import WirecutError
from wirecut.findings import Finding

__all__ = ["JobProfile", "Policy", "default_job", "load_job", "WirecutError", "Finding"]
__version__ = "0.1.0"
