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

#: The static-field hazards listed under the caution on sheets and in reports.
HAZARDS = (
    "Projectiles: ferromagnetic objects (tools, gas cylinders, trolleys) are pulled into "
    "the magnet with great force; the pull grows steeply towards the bore.",
    "Implants: active implants such as pacemakers and neurostimulators may be disturbed or "
    "damaged; keep people with implants outside the controlled-access area unless cleared.",
    "Quench: a quench boils off the cryogen; the vent path and room oxygen monitoring must "
    "be designed and checked with the magnet supplier.",
    "The field is always on: a superconducting magnet stays at field when the scanner is off.",
)
