"""Edge lists that are not what they should be: one line each, and never a line of the file's contents.

Sources: RFC 4180 (CSV: a header line of field names, then records); RFC 3629 (UTF-8);
The Unicode Standard §23.8 (byte-order marks). That an error about a file must not echo
what the file holds (a path pointed at a secrets file printed its first line) is common
practice in handling untrusted input.
"""

from __future__ import annotations

import pytest

from womlab import NetworkError, ScenarioError, load_scenario, read_edgelist

SECRET = "API_KEY=sk-live-123456"


def _scenario(tmp_path, edges: bytes, nodes: bytes | None = None, extra: str = ""):  # noqa: ANN202
    (tmp_path / "e.csv").write_bytes(edges)
    line = ""
    if nodes is not None:
        (tmp_path / "n.csv").write_bytes(nodes)
        line = 'nodes_path = "n.csv"\n'
    cfg = tmp_path / "s.toml"
    cfg.write_text(f'name = "invented"\n{extra}[network]\nkind = "edgelist"\npath = "e.csv"\n{line}')
    return cfg


@pytest.mark.parametrize(
    "edges, words",
    [
        (bytes(range(256)) * 8, "binary data"),
        ("source,target\n1,2\n2,3\n".encode("utf-16"), "UTF-16"),
        (b"source,target\n1,2\n2,\xff3\n", "not UTF-8 text (byte 0xff at line 3, column 3)"),
        (b"source,target\n", "holds no ties"),
        (b"", "is empty"),
        (b"source,target\n1,1\n2,2\n3,3\n", "holds only self-loops"),
        (b"source,target\n1,2\n01,3\n2,3\n", "writes one id two ways ('01' and '1')"),
        (b'source,target\n1,2\n"unclosed,3\n', "its rows do not parse as CSV"),
    ],
)
def test_a_malformed_edge_list_gets_one_line(tmp_path, edges, words):
    cfg = _scenario(tmp_path, edges)
    with pytest.raises((NetworkError, ScenarioError)) as exc:
        load_scenario(cfg)
    text = str(exc.value)
    assert "\n" not in text and text.startswith("network.path: 'e.csv'") and words in text


def test_one_id_written_two_ways_in_the_node_file(tmp_path):
    cfg = _scenario(tmp_path, b"source,target\n1,2\n2,3\n", b"id,region\n1,a\n2,a\n3,b\n03,b\n")
    with pytest.raises(NetworkError, match=r"network.nodes_path: 'n.csv' writes one id two ways \('03' and '3'\)"):
        load_scenario(cfg)


@pytest.mark.parametrize(
    "field, content",
    [
        ("path", f"{SECRET}\nOTHER=1\n"),
        ("path", "root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1::/usr/sbin:/usr/sbin/nologin\n"),
        ("path", "hello world secret-token-xyz\nmore\n"),
        ("nodes_path", f"{SECRET}\nOTHER=1\n"),
    ],
)
def test_an_error_never_echoes_the_file(tmp_path, field, content):
    good = b"source,target\n1,2\n2,3\n"
    if field == "path":
        cfg = _scenario(tmp_path, content.encode())
    else:
        cfg = _scenario(tmp_path, good, content.encode())
    with pytest.raises((NetworkError, ScenarioError)) as exc:
        load_scenario(cfg)
    text = str(exc.value)
    for secret in ("sk-live", "API_KEY", "root:", "secret-token", "hello"):
        assert secret not in text
    assert f"network.{field}" in text


def test_columns_found_are_named_when_the_file_is_a_csv(tmp_path):
    (tmp_path / "e.csv").write_text("from,to\n1,2\n2,3\n")
    with pytest.raises(NetworkError, match=r"missing source, target \(found from, to\)"):
        read_edgelist(tmp_path / "e.csv")


def test_the_node_file_gives_the_regions(tmp_path):
    # check said "regions 1" for a node file with 3 regions
    cfg = _scenario(tmp_path, b"source,target\n1,2\n2,3\n3,4\n4,1\n", b"id,region\n1,a\n2,a\n3,b\n4,c\n")
    s = load_scenario(cfg)
    assert s.market.regions == 3 and s.market.organisations == 4 and s.network.mean_degree == 2.0


def test_regions_that_disagree_with_the_node_file_are_refused(tmp_path):
    cfg = _scenario(
        tmp_path,
        b"source,target\n1,2\n2,3\n3,4\n4,1\n",
        b"id,region\n1,a\n2,a\n3,b\n4,c\n",
        extra="[market]\nregions = 2\n",
    )
    with pytest.raises(ScenarioError, match=r"market.regions must match the node file \(3 regions in n.csv\), got 2"):
        load_scenario(cfg)


def test_a_utf8_byte_order_mark_is_allowed(tmp_path):
    cfg = _scenario(tmp_path, b"\xef\xbb\xbfsource,target\n1,2\n2,3\n")
    assert load_scenario(cfg).market.organisations == 3
