"""Many sites, one view: each site publishes its state over MQTT for a fleet view.

    site.py      pure: the site's topics, its versioned JSON payloads, what is worth sending
    settings.py  the site's [fleet] config section
    uplink.py    the site side: the daemon's state publisher (its own MQTT connection and will)

A fleet view is for oversight: the alert to the person on duty always comes from each site.
"""
