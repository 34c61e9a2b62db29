"""`rankscope serve` for real: it answers to the names of the address it serves on and refuses
any other Host (DNS rebinding; RFC 9110 §7.2 Host, §15.5.20 421), on the served port only,
and refuses a change sent from another origin (RFC 6454 Origin; 403).
"""

from __future__ import annotations

import httpx


def test_served_names_only(serve) -> None:
    server = serve()
    port = server.port
    with httpx.Client(base_url=server.url, timeout=10) as client:
        for host in (f"127.0.0.1:{port}", f"localhost:{port}", f"[::1]:{port}"):
            assert client.get("/", headers={"Host": host}).status_code == 200, host
        for host in (f"rebound.example:{port}", f"127.0.0.1:{port + 1}", "testserver",
                     f"127.0.0.1.rebound.example:{port}"):
            r = client.get("/api/sessions", headers={"Host": host})
            assert r.status_code == 421, host
            assert "DNS rebinding" in r.json()["error"]
        r = client.post("/api/upload", headers={"Origin": "http://rebound.example"},
                        files={"file": ("u.csv", b"a,b\n1,2\n3,5\n", "text/csv")})
        assert r.status_code == 403, r.text
        assert "http://rebound.example" in r.json()["error"]
        own = client.post("/api/upload", headers={"Origin": server.url},
                          files={"file": ("u.csv", b"a,b\n1,2\n3,5\n", "text/csv")})
        assert own.status_code == 201, own.text
