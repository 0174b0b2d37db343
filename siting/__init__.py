"""siting: planning estimates of static magnetic stray fields in buildings.

Results are planning estimates. They must be confirmed by the site's qualified
MR physicist / MR safety expert, the magnet supplier's site data and local codes
and regulation before any decision that affects safety.
"""

from siting.errors import SitingError

__all__ = ["SitingError"]
__version__ = "0.1.0"
