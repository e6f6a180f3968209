"""What a gateway's reply callback carries (frostwatch.status.gateway, pure): the token or the
code and who sent it, from JSON or a form; any body at all gives an answer, never an exception."""

from __future__ import annotations

import json

from hypothesis import given
from hypothesis import strategies as st

from frostwatch.status.gateway import GatewayReply, reply_from_callback

TOKEN = "v1." + "a" * 20 + "." + "b" * 20


def test_a_json_reply_with_a_code_in_its_text():
    r = reply_from_callback(json.dumps({"from": "+15550100", "text": "ok k7qm4x on my way"}), "application/json")
    assert r == GatewayReply(token="", code="ok k7qm4x on my way", who="+15550100", sender="+15550100")


def test_a_form_with_a_token_and_a_reply_with_a_token_in_its_text():
    assert reply_from_callback(f"token={TOKEN}&who=gw", "application/x-www-form-urlencoded").token == TOKEN
    r = reply_from_callback(json.dumps({"text": f"OK {TOKEN}", "from": 15550100}), "")
    assert r.token == TOKEN and r.who == "15550100" and r.sender is None  # a number is no phone to match


def test_no_code_no_token_and_not_json_give_an_empty_reply():
    for raw, ctype in (('{"text": "thanks"}', "application/json"), ("{not json", "application/json"),
                       ("[1, 2]", "application/json"), ("", "")):
        assert reply_from_callback(raw, ctype) == GatewayReply("", "", "gateway", None)


def test_json_nested_deeper_than_the_parser_goes_is_an_empty_reply():
    # 4,000 levels of brackets: json.loads raises RecursionError (not ValueError), which once
    # escaped the handler, so the gateway got no answer at all.
    deep = "[" * 4000 + "]" * 4000
    assert reply_from_callback(deep, "application/json") == GatewayReply("", "", "gateway", None)
    nested_text = '{"text": ' + "[" * 900 + "]" * 900 + ', "from": ' + "[" * 900 + "]" * 900 + "}"
    assert reply_from_callback(nested_text, "application/json") == GatewayReply("", "", "gateway", None)


JSON = st.recursive(st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False) | st.text(),
                    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4),
                    max_leaves=20)


@given(raw=st.text(max_size=400), ctype=st.sampled_from(["application/json", "application/x-www-form-urlencoded",
                                                         "text/plain", ""]))
def test_any_body_gives_a_reply(raw, ctype):
    r = reply_from_callback(raw, ctype)
    assert isinstance(r.token, str) and isinstance(r.code, str) and isinstance(r.who, str)
    assert len(r.code) <= 500 and len(r.who) <= 80 and (r.sender is None or isinstance(r.sender, str))


@given(doc=st.dictionaries(st.sampled_from(["token", "code", "text", "body", "from", "who", "x"]), JSON, max_size=6))
def test_any_json_object_gives_a_reply(doc):
    r = reply_from_callback(json.dumps(doc), "application/json")
    assert isinstance(r.token, str) and isinstance(r.code, str) and isinstance(r.who, str)
