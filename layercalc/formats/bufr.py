"""BUFR radiosonde messages through ecCodes (optional extra `layercalc[bufr]`).

    decoded = read_bufr("soundings.bufr")        # or parse_bufr(data, name)

Templates read (WMO BUFR table D, from memory; the names below are the element keys
ecCodes gives, which this module reads, not the descriptor layout):
- 3 09 052 (TEMP data converted to BUFR), 3 09 056 (dropsonde descent), 3 09 057
  (high-resolution ascent, with time and balloon drift per level);
- 3 09 007 (older TEMP template, geopotential 0 10 003 in m2 s-2, divided by g0 here).

Per level: pressure (0 07 004), geopotential height (0 10 009, gpm) or geopotential
(0 10 003, m2 s-2), temperature (0 12 101 or 0 12 001), dewpoint (0 12 103 or 0 12 003),
wind direction and speed (0 11 001, 0 11 002), vertical sounding significance (0 08 042
or 0 08 001) and, where present, the balloon drift (0 05 015, 0 06 015). Per message:
station index (block and station number), ship or mobile identifier, position,
elevation (0 07 030, else 0 07 001, else the release height 0 07 007 except for a
dropsonde, 3 09 056, whose release height is the aircraft's) and time. Units are read from ecCodes for every
quantity and converted; an unknown unit is an error, not a guess. Each message must
hold one subset or several uncompressed ones; compressed multi-subset messages are
refused with a message saying so.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from layercalc.constants import G0
from layercalc.errors import InputError, LayercalcError, MessageError, Notice
from layercalc.source import read_input_bytes

from . import hydrostatic
from .decoded import Decoded, DecodedSounding, sort_levels

__all__ = ["iter_messages", "parse_bufr", "read_bufr", "split_messages"]

TEMPLATES = {309052: "3 09 052", 309056: "3 09 056", 309057: "3 09 057", 309007: "3 09 007"}

_MISSING_FLOAT = -1e100
_MISSING_INT = 2147483647


def _eccodes():
    try:
        import eccodes  # noqa: PLC0415 - heavy, optional
    except ImportError:
        raise InputError(
            "reading BUFR needs ecCodes, which is not installed",
            hint="install the optional extra: pip install 'layercalc[bufr]'") from None
    return eccodes


def read_bufr(path) -> Decoded:
    """Read a file of BUFR messages; see `parse_bufr`."""
    path = Path(path)
    data = read_input_bytes(path)
    return parse_bufr(data, str(path))


def split_messages(data: bytes, name: str) -> list[tuple[int, bytes]]:
    """(byte offset, message) of each BUFR message: 'BUFR', total length in bytes 4-6,
    ending '7777' (editions 2-4, from memory of the Manual on Codes Vol. I.2)."""
    return list(iter_messages(data, name))


def iter_messages(data: bytes, name: str):
    """The messages of `split_messages` one by one, so that a reader keeps those before a
    message that is cut off (MessageError at that message)."""
    offset = data.find(b"BUFR")
    if offset < 0:
        raise InputError(f"{name} holds no BUFR message (no 'BUFR' marker)")
    while offset >= 0:
        if offset + 8 > len(data):
            raise MessageError(f"message at byte {offset} is cut off", location=f"{name}:byte {offset}")
        length = int.from_bytes(data[offset + 4:offset + 7], "big")
        edition = data[offset + 7]
        if edition < 2 or length < 8 or offset + length > len(data):
            raise MessageError(
                f"the BUFR message at byte {offset} (edition {edition}) claims {length} bytes, "
                f"but {len(data) - offset} remain", location=f"{name}:byte {offset}",
                hint="the file may be cut off, or be BUFR edition 0/1, which is not read")
        message = data[offset:offset + length]
        if not message.endswith(b"7777"):
            raise MessageError(f"the BUFR message at byte {offset} does not end with '7777'",
                               location=f"{name}:byte {offset}")
        yield offset, message
        offset = data.find(b"BUFR", offset + length)


def parse_bufr(data: bytes, name: str = "<bytes>") -> Decoded:
    """Decode every radiosonde message in `data`; each subset becomes a sounding."""
    eccodes = _eccodes()
    soundings, notices, problems, messages = [], [], [], []
    cut = None
    try:
        for offset_and_message in iter_messages(data, name):
            messages.append(offset_and_message)
    except MessageError as error:
        if not messages:
            raise
        cut = error   # a file cut off after whole messages: those are read
    for number, (offset, message) in enumerate(messages, start=1):
        where = f"{name}:message {number} (byte {offset})"
        try:
            soundings.extend(_decode_message(eccodes, message, where, name, notices))
        except MessageError as error:
            problems.append(error)
        except LayercalcError:
            raise
        except Exception as exc:  # ecCodes' own errors (GribInternalError and kin)
            problems.append(MessageError(f"ecCodes cannot decode it: {exc}", location=where))
    if cut is not None:
        problems.append(cut)
    return Decoded(tuple(soundings), tuple(notices), tuple(problems), name, "BUFR")


def _decode_message(eccodes, message: bytes, where: str, name: str, notices: list):
    handle = eccodes.codes_new_from_message(message)
    try:
        eccodes.codes_set(handle, "unpack", 1)
        descriptors = [int(d) for d in eccodes.codes_get_array(handle, "unexpandedDescriptors")]
        template = next((TEMPLATES[d] for d in descriptors if d in TEMPLATES), None)
        if template is None:
            raise MessageError(
                "not a radiosonde template: expected 3 09 052, 3 09 056, 3 09 057 or 3 09 007, "
                f"found {' '.join(str(d) for d in descriptors[:4])}", location=where)
        subsets = int(eccodes.codes_get(handle, "numberOfSubsets"))
        if subsets > 1 and int(eccodes.codes_get(handle, "compressedData")):
            raise MessageError(f"{subsets} compressed subsets: compressed multi-subset "
                               "messages are not read", location=where)
        return [_subset(eccodes, handle, template, s if subsets > 1 else None, where, name, notices)
                for s in range(1, subsets + 1)]
    finally:
        eccodes.codes_release(handle)


def _key(subset, key):
    return f"/subsetNumber={subset}/{key}" if subset else key


def _scalar(eccodes, handle, subset, *keys):
    for key in keys:
        try:
            value = eccodes.codes_get(handle, _key(subset, key))
        except Exception:  # key absent in this template
            continue
        if isinstance(value, str):
            value = value.strip()
            if value:
                return value
            continue
        if value not in (_MISSING_INT, _MISSING_FLOAT) and value is not None:
            return value
    return None


def _array(eccodes, handle, subset, key, count, where):
    """The values of one element over the levels (first `count` entries), or None if absent.

    An element repeated after the level loop (3 09 007 followed by a wind-shear block
    repeats pressure) gives more than `count` entries: the first `count` belong to the
    levels. Fewer than `count` is an error, never a silent gap.
    """
    try:
        values = np.asarray(eccodes.codes_get_array(handle, _key(subset, key)), dtype=float)
    except Exception:  # absent from this template
        return None, None
    try:
        unit = eccodes.codes_get(handle, _key(subset, f"#1#{key}->units"))
    except Exception:
        unit = None
    values = np.where((values == _MISSING_FLOAT) | (values == _MISSING_INT), np.nan, values)
    if values.size < count:
        raise MessageError(f"{key} has {values.size} values for {count} levels", location=where)
    return values[:count], unit


_UNITS = {"Pa": 1.0, "K": 1.0, "m/s": 1.0, "deg": 1.0, "gpm": 1.0, "m": 1.0,
          "m2 s-2": 1.0 / G0}


def _convert(values, unit, what, where):
    if values is None:
        return None
    if unit not in _UNITS:
        raise MessageError(f"{what} comes in '{unit}', a unit this reader does not know",
                           location=where)
    return values * _UNITS[unit]


def _subset(eccodes, handle, template, subset, where, name, notices) -> DecodedSounding:
    where_subset = f"{where}, subset {subset}" if subset else where
    count = 0
    for key in ("airTemperature", "windSpeed", "pressure"):
        try:
            count = int(eccodes.codes_get_size(handle, _key(subset, key)))
            break
        except Exception:  # absent
            continue
    pressure, unit = _array(eccodes, handle, subset, "pressure", count, where_subset)
    if pressure is None or count == 0:
        raise MessageError("no pressure levels", location=where_subset)
    pressure = _convert(pressure, unit, "pressure", where_subset)
    columns = {}
    height = None
    for key in ("nonCoordinateGeopotentialHeight", "nonCoordinateGeopotential"):
        values, unit = _array(eccodes, handle, subset, key, count, where_subset)
        if values is not None:
            height = _convert(values, unit, key, where_subset)
            break
    columns["height"] = height if height is not None else np.full(count, np.nan)
    for column, key in (("temperature", "airTemperature"), ("dewpoint", "dewpointTemperature"),
                        ("wind_direction", "windDirection"), ("wind_speed", "windSpeed")):
        values, unit = _array(eccodes, handle, subset, key, count, where_subset)
        values = _convert(values, unit, key, where_subset)
        columns[column] = values if values is not None else np.full(count, np.nan)
    remarks = [f"BUFR template {template}"]
    if template == "3 09 007":
        remarks.append("heights from geopotential (0 10 003, m2 s-2) divided by g0")
    for key in ("latitudeDisplacement", "longitudeDisplacement"):
        values, _ = _array(eccodes, handle, subset, key, count, where_subset)
        if values is not None and np.nanmax(np.abs(np.nan_to_num(values)), initial=0.0) > 0:
            columns[key] = values
    if "latitudeDisplacement" in columns:
        remarks.append("the balloon drift (latitude/longitude displacement per level) is in "
                       "the message; layercalc places every level at the station")
        columns.pop("latitudeDisplacement")
        columns.pop("longitudeDisplacement", None)
    keep = np.isfinite(pressure) & (pressure > 0.0)
    if not keep.any():
        raise MessageError("no level has a pressure above 0 Pa", location=where_subset)
    missing = int((~np.isfinite(pressure)).sum())
    if missing:
        remarks.append(f"left out: {missing} level{'s' * (missing > 1)} without a pressure")
    not_positive = pressure[np.isfinite(pressure) & ~keep]
    if not_positive.size:
        # real messages carry them (ecCodes' sample temp.bufr ends with a level at 0 Pa)
        remarks.append(f"left out: {not_positive.size} level{'s' * (not_positive.size > 1)} "
                       "at " + ", ".join(f"{p:g}" for p in not_positive)
                       + " Pa (not a pressure in the atmosphere)")
    # several entries at one pressure (e.g. a standard level also flagged significant):
    # keep the first, fill its gaps from the others
    pressure, columns, _ = sort_levels(pressure[keep], {k: v[keep] for k, v in columns.items()})
    pressure, columns = _merge_equal_pressures(pressure, columns)
    own = []
    for finding in hydrostatic.hydrostatic_findings(
            pressure, columns["height"], columns["temperature"], columns["dewpoint"],
            np.ones(pressure.size)):
        own.append(Notice(hydrostatic.describe(finding, pressure, columns["height"]),
                              location=where_subset))
    block = _scalar(eccodes, handle, subset, "#1#blockNumber", "blockNumber")
    number = _scalar(eccodes, handle, subset, "#1#stationNumber", "stationNumber")
    if block is not None and number is not None:
        station = f"{int(block):02d}{int(number):03d}"
        kind = "land"
    else:
        station = _scalar(eccodes, handle, subset, "shipOrMobileLandStationIdentifier",
                          "aircraftRegistrationNumberOrOtherIdentification")
        kind = "ship or mobile"
        if station is None:
            station = where_subset.rsplit(":", 1)[-1]
    # "#1#" is the data section's first occurrence ("latitude" alone may be the local
    # section's rounded copy)
    latitude = _scalar(eccodes, handle, subset, "#1#latitude", "latitude")
    longitude = _scalar(eccodes, handle, subset, "#1#longitude", "longitude")
    if template == "3 09 056":
        # a dropsonde's 0 07 007 height is where the aircraft released it, not the ground
        elevation = _scalar(eccodes, handle, subset, "#1#heightOfStationGroundAboveMeanSeaLevel")
        release = _scalar(eccodes, handle, subset, "#1#height")
        if release is not None:
            remarks.append(f"released at {float(release):g} m above mean sea level (0 07 007); "
                           "not taken as a ground elevation")
        if kind == "ship or mobile":
            kind = "drop"
    else:
        elevation = _scalar(eccodes, handle, subset, "#1#heightOfStationGroundAboveMeanSeaLevel",
                            "#1#heightOfStation", "#1#height")
    parts = [int(_scalar(eccodes, handle, subset, f"#1#{k}", k) or 0)
             for k in ("year", "month", "day", "hour", "minute")]
    time = f"{parts[0]:04d}-{parts[1]:02d}-{parts[2]:02d} {parts[3]:02d}:{parts[4]:02d} UTC"
    return DecodedSounding(
        station=str(station), kind=kind, time=time,
        latitude=float(latitude) if latitude is not None else None,
        longitude=float(longitude) if longitude is not None else None,
        elevation=float(elevation) if elevation is not None else None,
        position_source="the BUFR message", pressure=pressure, height=columns["height"],
        temperature=columns["temperature"], dewpoint=columns["dewpoint"],
        wind_direction=columns["wind_direction"], wind_speed=columns["wind_speed"],
        source=name, parts=(where_subset.split(":", 1)[-1] + f" ({template})",),
        remarks=tuple(remarks), notices=tuple(own))


def _merge_equal_pressures(pressure, columns):
    if pressure.size < 2 or np.all(np.diff(pressure) < 0):
        return pressure, columns
    unique, first = np.unique(-pressure, return_index=True)
    merged = {name: values[first].copy() for name, values in columns.items()}
    for index, p in enumerate(pressure):
        target = int(np.searchsorted(unique, -p))
        for name, values in columns.items():
            if not math.isfinite(merged[name][target]) and math.isfinite(values[index]):
                merged[name][target] = values[index]
    return -unique, merged
