"""The pipeline both faces share: feeds -> engine -> alarms -> store. No UI imports.

- plan.py      `WatchPlan` (feeds, characteristics, options) and `Characteristics`: what is
               charted, and discovery of characteristics found in the data (one definition)
- collector.py `Collector`: engines and feed health in memory; one poll, or one beat (feed
               health, alarm timers, new-baseline requests, flood), in ONE transaction
- roles.py     `RoleLoop`: collector while holding the lease, viewer otherwise; takeover,
               never-silent failures with back-off and the "monitoring stopped" alarm
- announce.py  `Announcer`: records to the faces, alarm hooks, alarm-state changes, after
               each commit
- monitor.py   `Monitor`: the façade the commands and the screen hold
"""
