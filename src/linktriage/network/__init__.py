"""Reading the network: the interface the bot asks (interface), the inventory file
(inventory), the real devices read through their collectors (polling, collectors/), and
the built-in demo network (demo)."""
