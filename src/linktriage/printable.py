"""Text from outside (a device, a file, a person) made safe and honest to show."""

from __future__ import annotations


def printable(text: str) -> str:
    """Text from a device, a file or a person, safe and honest on a terminal or in chat.

    A character that would act rather than show (an escape sequence that clears the screen,
    a newline that forges a table row) or that shows nothing at all (a zero-width space or
    a byte-order mark pasted in with a name, a right-to-left override that reorders what
    follows) is drawn as its code point, ``<U+200B>``: visible exactly where it sits, one
    form for every such character, and the name character tables and search engines know
    it by, so a person sees why a name that looks right is not, and can look it up. (A
    Python escape such as ``\\u200b`` reads as code, and is what the name would be if
    someone had typed a backslash.)
    """
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else f"<U+{ord(ch):04X}>" for ch in text)
