"""Drawers: everything the bot and the command line show, and the words they say."""
