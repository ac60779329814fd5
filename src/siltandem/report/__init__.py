"""What a result looks like to a person: terminal text and figures (ax=None in, axes out)."""
