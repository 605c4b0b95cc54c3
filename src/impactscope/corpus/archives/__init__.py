"""Archives read in place, never unpacked: zip and wheel (`zip`), tar (`tar`), an archive inside
an archive root (`nested`); `members` turns a member of either kind into an `Entry`.

Hostile input is bounded by a `Limits` value (see `corpus.limits`): bytes read
per file and member (counted while reading, whatever a header says),
decompression ratio, members per archive, nesting depth. A bound that is
reached gives the entry, or one entry standing for the rest of an archive, its
own skip reason; nothing is raised.
"""
