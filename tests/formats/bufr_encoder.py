"""Small synthetic radiosonde BUFR messages, built with ecCodes at test time (test code only).

    data = encode_sounding(309052, LEVELS, block=99, station=901)

Starts from ecCodes' "BUFR4" sample, sets the replication count of the level loop, then
`unexpandedDescriptors` to the template, the identification and the level values, and
packs. Nothing is checked in: the message is a few hundred bytes and made each time, so
the values it carries are the ones in the test. Made-up stations (99xxx) and values.

Template 3 09 056 is not in the master table version of the BUFR4 sample (24); ecCodes
finds it from version 33 on, so `MASTER_TABLE` is set to 33 for both templates.
"""

from __future__ import annotations

import eccodes

MASTER_TABLE = 33

# Element keys of the level loop, in the units ecCodes encodes them in.
LEVEL_KEYS = {
    "pressure": "pressure",                                 # [Pa], 0 07 004
    "height": "nonCoordinateGeopotentialHeight",            # [gpm], 0 10 009
    "temperature": "airTemperature",                        # [K], 0 12 101
    "dewpoint": "dewpointTemperature",                      # [K], 0 12 103
    "wind_direction": "windDirection",                      # [deg], 0 11 001
    "wind_speed": "windSpeed",                              # [m/s], 0 11 002
}


def encode_sounding(template: int, levels: dict, *, block: int | None = None,
                    station: int | None = None, identifier: str | None = None,
                    latitude: float = 46.5, longitude: float = -31.25,
                    elevation: float | None = None, release_height: float | None = None,
                    time=(2026, 3, 14, 11, 30)) -> bytes:
    """One uncompressed single-subset message of `template` (309052 or 309056).

    `levels` maps the names of LEVEL_KEYS to equal-length lists (surface or release
    first, as the loop runs); values must be representable at the element's resolution
    (10 Pa, 1 gpm, 0.01 K, 1 degree, 0.1 m/s) for a round trip to compare equal.
    """
    count = len(levels["pressure"])
    handle = eccodes.codes_bufr_new_from_samples("BUFR4")
    try:
        eccodes.codes_set(handle, "masterTablesVersionNumber", MASTER_TABLE)
        eccodes.codes_set(handle, "dataCategory", 2)          # vertical soundings (not satellite)
        eccodes.codes_set(handle, "numberOfSubsets", 1)
        eccodes.codes_set(handle, "observedData", 1)
        eccodes.codes_set(handle, "compressedData", 0)
        # the level loop is an extended delayed replication (0 31 002); the wind-shear loop
        # of 3 09 052 a delayed one (0 31 001), here empty
        eccodes.codes_set_array(handle, "inputExtendedDelayedDescriptorReplicationFactor", [count])
        eccodes.codes_set_array(handle, "inputDelayedDescriptorReplicationFactor", [0])
        eccodes.codes_set(handle, "unexpandedDescriptors", template)
        if block is not None:
            eccodes.codes_set(handle, "#1#blockNumber", block)
            eccodes.codes_set(handle, "#1#stationNumber", station)
        if identifier is not None:
            eccodes.codes_set(handle, "#1#shipOrMobileLandStationIdentifier", identifier)
        for key, value in zip(("year", "month", "day", "hour", "minute"), time):
            eccodes.codes_set(handle, f"#1#{key}", value)
        eccodes.codes_set(handle, "#1#latitude", latitude)
        eccodes.codes_set(handle, "#1#longitude", longitude)
        if elevation is not None:
            eccodes.codes_set(handle, "#1#heightOfStationGroundAboveMeanSeaLevel", elevation)
        if release_height is not None:
            eccodes.codes_set(handle, "#1#height", release_height)
        for name, key in LEVEL_KEYS.items():
            if name in levels:
                eccodes.codes_set_array(handle, key, [float(v) for v in levels[name]])
        eccodes.codes_set(handle, "pack", 1)
        return bytes(eccodes.codes_get_message(handle))
    finally:
        eccodes.codes_release(handle)
