"""Helpers for tests that damage session documents."""


def json_paths(value, path=(), items=4):
    """Every path (tuple of keys and indexes) into a JSON value, the first ``items`` entries
    of each list only, not into the base64 text of arrays."""
    yield path
    if isinstance(value, dict):
        for k, v in value.items():
            if not (k == "data" and isinstance(v, str)):
                yield from json_paths(v, (*path, k), items)
    elif isinstance(value, list):
        for i, v in enumerate(value[:items]):
            yield from json_paths(v, (*path, i), items)
