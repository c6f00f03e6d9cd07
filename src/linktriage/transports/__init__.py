"""Where people talk to the bot: a local console, and Slack (Socket Mode or HTTP)."""
