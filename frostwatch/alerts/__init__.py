"""Alerts: from each block's advice to a person who has answered.

    levels.py            every level with its rank, and the names read from older versions
    rules.py             pure: the per-block state machine, advice plan in, level changes and alerts out
    config.py            [alerts], [[alerts.roster]], [[contacts]]: who is told, in what order
    channel_settings.py  [[channels]]: types, keys, defaults, checks
    outbox.py            Outbox: every alert and delivery written before it is sent; acknowledgements
    delivery.py          the channels' workers, attempts under a deadline, backoff (part of Outbox)
    escalation.py        repeats, escalation, local channels when remote ones fail (part of Outbox)
    acks.py, ackcodes.py one-use acknowledgement links and short codes
    armed.py             the dusk check of the whole alert path
    channels/            one module per channel type (email, webhook, mqtt, command, console)

The SQL of all of it is in frostwatch.store (outbox.py, acks.py); secrets come from frostwatch.secrets.
"""
