"""A small DevTools-protocol client for the report test: open a page in headless Chromium,
collect console errors and uncaught exceptions, evaluate expressions in the page."""
from __future__ import annotations

import json
import subprocess
import time
import urllib.request


def page_report(browser: str, flags: list, url: str, profile, websocket, checks: dict,
                timeout: float = 60.0) -> dict:
    profile.mkdir(parents=True, exist_ok=True)
    proc = subprocess.Popen([browser, *flags, "--remote-debugging-port=0",
                             "--remote-debugging-address=127.0.0.1",
                             f"--user-data-dir={profile}", "about:blank"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        port = _port(profile, timeout)
        targets = json.loads(urllib.request.urlopen(f"http://127.0.0.1:{port}/json/list",
                                                    timeout=10).read())
        target = next(t for t in targets if t["type"] == "page")
        # no Origin header: newer Chromium refuses a debugging socket from an origin it was
        # not told to allow, and a local client has none to give
        ws = websocket.create_connection(target["webSocketDebuggerUrl"], timeout=timeout,
                                         suppress_origin=True)
        try:
            return _visit(ws, url, checks, timeout)
        finally:
            ws.close()
    finally:
        proc.terminate()
        try:
            proc.wait(10)
        except subprocess.TimeoutExpired:
            proc.kill()


def _port(profile, timeout: float) -> int:
    marker = profile / "DevToolsActivePort"
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if marker.exists() and marker.read_text().strip():
            return int(marker.read_text().split()[0])
        time.sleep(0.1)
    raise TimeoutError("chromium did not open its DevTools port")


def _visit(ws, url: str, checks: dict, timeout: float) -> dict:
    ids = iter(range(1, 10_000))
    errors, replies = [], {}

    def send(method, **params):
        i = next(ids)
        ws.send(json.dumps({"id": i, "method": method, "params": params}))
        return i

    def pump(until):
        end = time.monotonic() + timeout
        while time.monotonic() < end:
            msg = json.loads(ws.recv())
            if "id" in msg:
                replies[msg["id"]] = msg
            method = msg.get("method", "")
            p = msg.get("params", {})
            if method == "Runtime.exceptionThrown":
                errors.append(p["exceptionDetails"].get("text", "exception"))
            elif method == "Runtime.consoleAPICalled" and p.get("type") == "error":
                errors.append(" ".join(str(a.get("value", "")) for a in p.get("args", [])))
            elif method == "Log.entryAdded" and p["entry"]["level"] == "error":
                errors.append(p["entry"].get("text", ""))
            if until(msg):
                return msg
        raise TimeoutError("no answer from the page")

    for method in ("Runtime.enable", "Log.enable", "Page.enable"):
        i = send(method)
        pump(lambda m, i=i: m.get("id") == i)
    send("Page.navigate", url=url)
    pump(lambda m: m.get("method") == "Page.loadEventFired")
    values = {}
    for name, expression in checks.items():
        i = send("Runtime.evaluate", expression=expression, returnByValue=True)
        reply = pump(lambda m, i=i: m.get("id") == i)
        values[name] = reply["result"]["result"].get("value")
    time.sleep(0.3)           # late console messages
    ws.settimeout(0.5)
    try:
        while True:
            pump(lambda m: False)
    except Exception:  # noqa: BLE001 - the socket's read timeout ends the drain
        pass
    return {"errors": errors, "values": values}
