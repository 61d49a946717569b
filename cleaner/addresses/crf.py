"""usaddress's conditional random field, called with its features built once
per distinct token: the tagger itself is usaddress's model, unchanged; only
the way its input is put together is ours, and gives the same labels
(tests/test_addresses_opendata.py checks every string of the labelled file)."""

from __future__ import annotations

import functools

import usaddress


def _attributes(features: dict, prefix: str = "") -> list[bytes]:
    """usaddress's features as crfsuite attribute names, encoded once: a true
    flag by its name, a value as name:value; a false flag weighs nothing and
    is left out, so the tagger's labels are the same and it reads a third of
    the names."""
    names = []
    for name, value in features.items():
        if value is True:
            names.append(f"{prefix}{name}".encode())
        elif value is not False:
            names.append(f"{prefix}{name}:{value}".encode())
    return names


@functools.lru_cache(maxsize=8192)
def _token_attributes(token: str) -> tuple[tuple[bytes, ...], tuple[bytes, ...], tuple[bytes, ...]]:
    """A token's attributes as itself, as the token before another, and as the token after."""
    features = usaddress.tokenFeatures(token)
    return (tuple(_attributes(features)), tuple(_attributes(features, "previous:")),
            tuple(_attributes(features, "next:")))


def sequence(tokens: list[str]) -> list[list[bytes]]:
    """usaddress.tokens2features, from attributes computed once per distinct
    token: each token's own, its neighbours' under previous and next, and
    where the line starts and ends."""
    found = [_token_attributes(token) for token in tokens]
    last = len(tokens) - 1
    items = []
    for index, (own, _, _) in enumerate(found):
        item = list(own)
        if index > 0:
            item += found[index - 1][1]
            if index == 1:
                item.append(b"previous:address.start")
        if index < last:
            item += found[index + 1][2]
            if index + 1 == last:
                item.append(b"next:address.end")
        items.append(item)
    items[0].append(b"address.start")
    items[last].append(b"address.end")
    return items


def labels(tokens: list[str]) -> list[str]:
    """usaddress's label of each token (as usaddress.tokenize cuts the line)."""
    return list(_labels(tuple(token.lower() for token in tokens)))


# Every feature reads the token in lower case: a line typed in capitals and the
# same line in mixed case, or the rules' words of a line and the line itself,
# are tagged once.
@functools.lru_cache(maxsize=8192)
def _labels(tokens: tuple[str, ...]) -> tuple[str, ...]:
    return tuple(usaddress.TAGGER.tag(sequence(list(tokens))))
