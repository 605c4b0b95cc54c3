"""Resolution of downstream references to library members: bindings, scopes, type flow, matching."""
