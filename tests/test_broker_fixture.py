"""The test broker really persists: the guard against reliability.md finding 8 (a broker that
cannot write its persistence file loses every queued message on restart, silently)."""


def test_broker_writes_its_persistence_file(mosquitto):
    mosquitto.save_now()
    assert mosquitto.db_file.stat().st_size > 0
    log = (mosquitto.workdir / "mosquitto.log").read_text()
    assert "Permission denied" not in log
