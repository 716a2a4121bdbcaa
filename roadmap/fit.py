"""Robot sizes that cannot be meant: the largest footprint accepted, metres."""

from __future__ import annotations

#: Largest robot footprint accepted across, metres. Mobile robots that share floors with
#: people are well under it (from memory: tugger trains and pallet movers 2-4 m); a larger
#: number is nearly always millimetres or centimetres typed as metres.
MAX_ROBOT_SIZE = 5.0
