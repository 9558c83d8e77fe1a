"""Series keys: one spelling per key, and every stored key readable back at its URL."""

from __future__ import annotations

import unicodedata

import pytest

from tests.service.conftest import Api, series_body
from tests.storage.builders import monthly_series

CAFE_COMPOSED = "caf\u00e9"        # é as one code point
CAFE_DECOMPOSED = "cafe\u0301"     # e + combining acute accent


def _post(api: Api, key: str):
    body = series_body(monthly_series("x", n=24)) | {"key": key}
    return api.post("submitter", "/v1/series", json=body)


def test_two_spellings_of_one_key_are_one_series(api: Api):
    first = _post(api, f"shops/{CAFE_DECOMPOSED}")
    second = _post(api, f"shops/{CAFE_COMPOSED}")

    assert first.status_code == 201
    assert second.status_code == 200  # the same data under the same key: no new version
    assert first.json()["series_key"] == unicodedata.normalize("NFC", f"shops/{CAFE_DECOMPOSED}")
    assert [s["key"] for s in api.get("reader", "/v1/series").json()["items"]] == \
        [f"shops/{CAFE_COMPOSED}"]


@pytest.mark.parametrize("key", [
    "sales/\u202enorth",            # right-to-left override
    "sales/no\u200brth",            # zero-width space
    "sales/north\x07",              # control character
    "sales/../admin", "sales/./north", "sales//north", "/sales", "sales/",
    "sales/champion", "sales/versions/2", "sales/monitoring", "sales/observations",
    "upload", "sales/history/north",
    "s\u0430les/north",             # Cyrillic a inside a Latin word
])
def test_keys_that_cannot_be_read_back_or_look_alike_are_refused(api: Api, key: str):
    response = _post(api, key)

    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/key"
    assert api.get("reader", "/v1/series").json()["items"] == []


def test_an_all_cyrillic_or_all_greek_key_is_a_key_like_any_other(api: Api):
    assert _post(api, "продажи/север").status_code == 201
    assert _post(api, "πωλήσεις").status_code == 201


@pytest.mark.parametrize(("stored", "look_alike"), [
    ("paypal", "раураӏ"),   # all Cyrillic: р а у р а ӏ
    ("раураӏ", "paypal"),   # the Latin one second
    ("shop/PAY", "shop/ΡΑΥ"),              # all Greek capitals: Ρ Α Υ
    ("sales/café", "sales/саfе́"),  # Cyrillic с, а, е, and Latin f
])
def test_a_whole_script_look_alike_of_a_stored_key_is_refused(api: Api, stored: str,
                                                              look_alike: str):
    first = _post(api, stored)
    second = _post(api, look_alike)

    assert first.status_code == 201
    assert second.status_code in (409, 422)  # 422: the mixed-script rule caught it first
    assert [s["key"] for s in api.get("reader", "/v1/series").json()["items"]] == \
        [unicodedata.normalize("NFC", stored)]
    if second.status_code == 409:
        assert "looks like the stored key" in second.json()["detail"]


def test_the_same_key_again_and_distinct_cyrillic_keys_are_accepted(api: Api):
    assert _post(api, "paypal").status_code == 201
    again = api.post("submitter", "/v1/series", json=series_body(monthly_series("x", n=25))
                     | {"key": "paypal"})
    assert again.status_code == 201 and again.json()["version"]["number"] == 2
    assert _post(api, "паупал").status_code == 201  # паупал


def test_an_upload_of_two_look_alikes_stores_neither(api: Api):
    rows = "series_key,period,value,frequency\n" + "".join(
        f"{key},2020-{m:02d},{m},P1M\n" for key in ("paypal", "раураӏ")
        for m in range(1, 4))

    response = api.post("submitter", "/v1/series/upload", content=rows,
                        headers={"Content-Type": "text/csv"})

    assert response.status_code == 409 and "looks like" in response.json()["detail"]
    assert api.get("reader", "/v1/series").json()["items"] == []


def test_the_csv_upload_follows_the_same_rules(api: Api):
    rows = "series_key,period,value,frequency\n" + "".join(
        f"{key},2020-{m:02d},{m},P1M\n" for key in (f"a/{CAFE_DECOMPOSED}", f"a/{CAFE_COMPOSED}")
        for m in range(1, 4))
    bad = "series_key,period,value,frequency\nsales/champion,2020-01,1,P1M\n"

    merged = api.post("submitter", "/v1/series/upload", content=rows,
                      headers={"Content-Type": "text/csv"})
    reserved = api.post("submitter", "/v1/series/upload", content=bad,
                        headers={"Content-Type": "text/csv"})

    assert merged.status_code == 422 and "spellings of one key" in merged.json()["detail"]
    assert reserved.status_code == 422 and "reserved" in reserved.json()["detail"]
    assert api.get("reader", "/v1/series").json()["items"] == []


@pytest.mark.parametrize("value", ["1_000", "\u0661\u0662\u0663", "inf", "nan", "0x10", " "])
def test_csv_numbers_are_plain_decimals_only(api: Api, value: str):
    text = f"series_key,period,value,frequency\na,2020-01,1,P1M\na,2020-02,{value},P1M\n"

    response = api.post("submitter", "/v1/series/upload", content=text,
                        headers={"Content-Type": "text/csv"})

    assert response.status_code == 422
    assert "line 3" in response.json()["detail"]
    assert api.get("reader", "/v1/series").json()["items"] == []


@pytest.mark.parametrize("value", ["-12", "3.5", "+.5", "1e6", "2.E-3"])
def test_plain_decimal_forms_are_numbers(api: Api, value: str):
    text = f"series_key,period,value,frequency\na,2020-01,1,P1M\na,2020-02,{value},P1M\n"

    response = api.post("submitter", "/v1/series/upload", content=text,
                        headers={"Content-Type": "text/csv"})

    assert response.status_code == 201, response.json()
