"""Rewrites: codemod patches from the change list, for `.py` files and notebooks.

Only sites the scan proves (`resolved` findings of a mechanical change) are rewritten; every
other finding goes to a review file. The data moves one way: findings of a file -> `plan`
(which node, which edit) -> `transform` (libcst, rewriting only) -> `lines` (the changed lines,
put back into the original text) -> `notebook` (into the JSON, byte for byte elsewhere) ->
`patch` / in place, and `review`. `project` does one project, `run` the corpus.
"""
