"""Collectors: one module per way of reading a device, found by name through entry points.

The interface is :class:`linktriage.network.collectors.base.Collector`; built in are ``demo``,
``file``, ``snmp``, ``restconf``, ``prometheus`` and ``linux``. A collector's protocol
library is imported only when that collector is used.
"""
