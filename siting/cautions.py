"""Fixed texts shown on every output: the cautions and the deferral to experts."""

CAUTION_TEXT = (
    "CAUTION: planning estimate only. Static magnetic fields pull ferromagnetic objects into the "
    "magnet (projectile risk), can disturb or damage active implants such as pacemakers, and a "
    "quench can release large volumes of cryogen gas. Confirm every result with the site's "
    "qualified MR physicist / MR safety expert, the magnet supplier's site data and local codes "
    "and regulation."
)

ACCESS_NOTE = (
    "Controlled-access level used: {value}. IEC 60601-2-33 (3rd ed.) and most national rules draw "
    "the controlled-access boundary at the 0.5 mT line; the 4th edition (2022) uses 0.9 mT."
)
