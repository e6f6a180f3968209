"""Many sites, one view: each site publishes its state over MQTT; `frostwatch fleet` reads them.

    site.py      pure: the site's topics, its versioned JSON payloads, what is worth sending
    settings.py  the site's [fleet] config section
    uplink.py    the site side: the daemon's state publisher (its own MQTT connection and will)
    view.py      pure: the central view's model (messages in, sites and blocks out)
    listen.py    the central side's MQTT subscriber
    page.py      the fleet page (stdlib http.server, like the status page)

The fleet view is for oversight: the alert to the person on duty always comes from each site.
"""
