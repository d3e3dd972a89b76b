"""Stated limits on what Skyloom accepts, in one place (README, "Limits").

They are sanity bounds, not physics: far beyond any fleet Skyloom is meant for, yet small enough
that arithmetic, memory and files stay finite. Anything outside them is refused with the field
that holds it. The magnitudes are common practice, no source (racing quadrotors fly at about
40 m/s and 5 g; light shows and inspections span well under 10 km).
"""

from __future__ import annotations

#: Largest absolute coordinate of any point, box corner or mesh offset (m).
MAX_COORDINATE_M = 100_000.0
#: Longest edge of the flight volume (m).
MAX_SITE_EXTENT_M = 20_000.0
#: Largest clearance radius or tracking margin of a drone type (m).
MAX_RADIUS_M = 100.0
#: Largest speed limit (m/s) and acceleration limit (m/s²) of a drone type.
MAX_SPEED_M_S = 100.0
MAX_ACCELERATION_M_S2 = 200.0
#: Longest fixed transition duration and longest hold (s), and the longest whole timeline (s).
MAX_DURATION_S = 86_400.0
MAX_TIMELINE_S = 7 * 86_400.0
#: Largest mesh scale factor and rotation angle (degrees).
MAX_MESH_SCALE = 10_000.0
MAX_ROTATION_DEG = 3600.0
#: Most drones in a fleet, and how much memory the dense assignment of a fleet of N needs
#: (three N × N float64 arrays in the auction), for the refusal message.
MAX_DRONES = 5_000
ASSIGNMENT_BYTES_PER_PAIR = 3 * 8
#: Most formations, transitions and drone types in one scene.
MAX_FORMATIONS = 1_000
MAX_TRANSITIONS = 1_000
MAX_DRONE_TYPES = 100
#: Deepest JSON nesting accepted in a scene or export file (the formats need 6).
MAX_JSON_DEPTH = 32
#: Largest scene or export JSON file, formation CSV file and mesh file (bytes).
MAX_JSON_BYTES = 64 * 2**20
MAX_CSV_BYTES = 64 * 2**20
MAX_MESH_BYTES = 512 * 2**20
#: samples.csv rate (Hz): above 0, at most this; and the most rows one samples.csv may hold.
MAX_SAMPLE_RATE_HZ = 1_000.0
MAX_SAMPLE_ROWS = 20_000_000
#: Worker processes for one plan.
MAX_WORKERS = 256
