"""The chat layer: commands and replies as plain data, and the transports that carry them.

``commands`` parses what a person typed, ``labels`` reads what they report back,
``replies`` holds the answers; ``console`` and ``slack`` carry them, ``blocks`` and
``text`` draw them. Nothing outside ``slack`` imports Slack's libraries.
"""
