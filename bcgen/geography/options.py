"""The closed vocabularies of the geography options (one home; the spec schema reads them)."""

#: Which neighbours connect water cells in the flood fill.
CONNECTIVITIES: tuple[str, ...] = ("edge", "corner")

#: What becomes of a basin below sea level that is not connected to the world ocean:
#: ``lake`` keeps it as an inland water body (labelled, land in the sea mask, land in the
#: land fraction as CMIP's sftlf counts lakes); ``land`` makes it plain land.
BASIN_POLICIES: tuple[str, ...] = ("lake", "land")

#: What becomes of ocean cells shallower than the minimum depth.
SHALLOW_POLICIES: tuple[str, ...] = ("deepen", "land")

#: What a strait rule does.
STRAIT_ACTIONS: tuple[str, ...] = ("open", "close")

#: What an ice input holds.
ICE_KINDS: tuple[str, ...] = ("thickness", "fraction")
