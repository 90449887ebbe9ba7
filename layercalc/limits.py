"""Limits on what layercalc reads and computes, in one place (README, "Limits").

Each limit is checked before the work it protects, and a value beyond it is our error with
its position, never a traceback, an endless read or an output carrying inf or NaN.
"""

# Any number layercalc reads (in a file, a workbook or an option) or computes, in SI units,
# lies within +-LARGEST_VALUE. Far beyond anything physical, and far enough below the float64
# limit (1.8e308) that unit conversions and the numbers derived for the outputs (squares,
# products of two values, conversions to hPa/h or 1e-5 s^-1) stay finite.
LARGEST_VALUE = 1e100

# A unit's factor to SI ([1e-5 s^-1] has 1e-5) lies within [1/LARGEST_UNIT_FACTOR,
# LARGEST_UNIT_FACTOR], so that a value in range stays finite in any unit it is shown in.
LARGEST_UNIT_FACTOR = 1e30

# Text inputs (.layers files), read whole: a regular file of at most this many bytes. A
# million-layer table (checking/tables.MAX_LAYERS) takes about 40 MB.
MAX_TEXT_BYTES = 64_000_000

# The longest line of a .layers file, in characters (a row of a wide table fits easily;
# a longer line is refused before parsing).
MAX_LINE_CHARS = 200_000

# Names of cells, columns, headings, scenarios and stations, in characters: they head
# report columns and workbook cells (the longest built-in name has 33).
MAX_NAME_CHARS = 64

# A title, a note or a scenario's description, in characters (a note longer than this
# belongs in a document of its own).
MAX_TITLE_CHARS = 200
MAX_NOTE_CHARS = 2_000
