# Measures one tenant flooding compiles against another tenant's annotator (SECURITY.md, "Resource bounds").
# Usage: python3 compile_flood.py src/TeachServe.Server/bin/Release/net10.0/TeachServe.Server.dll PORT
import json, os, random, subprocess, sys, threading, time, urllib.request, urllib.error, shutil, tempfile
dll, port = sys.argv[1], int(sys.argv[2])
admin = "tsa.measure-admin-key-0123456789abcdef"
data = tempfile.mkdtemp(prefix="bounds-measure-")
env = dict(os.environ, TeachServe__AdminKey=admin, TeachServe__DataDirectory=data, TeachServe__LoadDemo="false",
           TeachServe__PrintStartupBanner="false", ASPNETCORE_ENVIRONMENT="Production", Logging__LogLevel__Default="Warning")
proc = subprocess.Popen(["dotnet", dll, "--urls", f"http://127.0.0.1:{port}"], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
base = f"http://127.0.0.1:{port}"

def call(method, path, key=None, body=None, ctype="application/json"):
    req = urllib.request.Request(base + path, method=method, data=body)
    if key: req.add_header("Authorization", "Bearer " + key)
    if body is not None: req.add_header("Content-Type", ctype)
    try:
        with urllib.request.urlopen(req, timeout=600) as r: return r.status, r.read()
    except urllib.error.HTTPError as e: return e.code, e.read()

for _ in range(600):
    try:
        if call("GET", "/readyz")[0] == 200: break
    except Exception: pass
    time.sleep(0.1)

def project(n_items, seed):
    rnd = random.Random(seed)
    p = {"name": f"measure {seed}", "labels": ["sound", "defect"], "family": {"kind": "stumps"}, "policy": "adaptive",
         "gate": {"targetError": 0.1, "confidence": 0.8, "maxTeachingItems": 10, "retakes": 0,
                  "test": {"mode": "fixed", "maxItems": 8, "delta": 0.6}}}
    s, b = call("POST", "/api/v1/projects", admin, json.dumps(p).encode()); assert s == 201, b
    keys = json.loads(b)
    lines = []
    for i in range(n_items):
        f = {"x": rnd.random(), "y": rnd.random(), "z": rnd.random()}
        label = "defect" if f["x"] + 0.3 * f["y"] > 0.65 else "sound"
        lines.append(json.dumps({"id": f"i{i:05}", "pool": "test" if i % 5 == 0 else "teach", "label": label,
                                 "features": f, "content": {"text": f"x={f['x']:.3f}"}}))
    s, b = call("POST", f"/api/v1/projects/{keys['projectId']}/items", keys["ownerKey"], "\n".join(lines).encode(), "application/x-ndjson")
    assert s == 200, b
    return keys

big = project(5000, 1)
small = project(40, 2)
s, b = call("POST", f"/api/v1/projects/{small['projectId']}/versions", small["ownerKey"]); assert s == 201, b
s, b = call("POST", f"/api/v1/projects/{small['projectId']}/sessions", small["embedKey"], json.dumps({"workerRef": "w"}).encode()); assert s == 201, b
sess = json.loads(b)

stop = threading.Event(); lat = []
def poll():
    while not stop.is_set():
        t = time.perf_counter(); s, _ = call("GET", f"/api/v1/sessions/{sess['sessionId']}/next", sess["token"]); lat.append(time.perf_counter() - t)
threading.Thread(target=poll, daemon=True).start()
time.sleep(1)
baseline = sorted(lat); lat.clear()

statuses = [None] * 12
def compile_(i): statuses[i] = call("POST", f"/api/v1/projects/{big['projectId']}/versions", big["ownerKey"])[0]
t0 = time.perf_counter()
ts = [threading.Thread(target=compile_, args=(i,)) for i in range(12)]
for t in ts: t.start()
for t in ts: t.join()
# Wait for any background compile to finish so the peak covers all the work.
while True:
    s, b = call("GET", f"/api/v1/projects/{big['projectId']}/versions", big["ownerKey"])
    vs = json.loads(b)
    if all(v["status"] != "compiling" for v in vs): break
    time.sleep(0.5)
elapsed = time.perf_counter() - t0
stop.set(); time.sleep(0.2)
hwm = [l for l in open(f"/proc/{proc.pid}/status") if l.startswith(("VmHWM", "VmRSS"))]
during = sorted(lat)
def pct(xs, q): return xs[min(len(xs) - 1, int(q * len(xs)))] * 1000 if xs else float("nan")
print(json.dumps({
    "statuses": sorted(statuses), "versions": len(vs), "ready": sum(v["status"] == "ready" for v in vs),
    "compile_wall_s": round(elapsed, 1),
    "next_baseline_ms": {"p50": round(pct(baseline, .5), 1), "max": round(pct(baseline, 1), 1), "n": len(baseline)},
    "next_during_ms": {"p50": round(pct(during, .5), 1), "p99": round(pct(during, .99), 1), "max": round(pct(during, 1), 1), "n": len(during)},
    "memory": [l.split(":")[0] + " " + l.split(":")[1].strip() for l in hwm]}))
proc.terminate(); proc.wait()
shutil.rmtree(data, ignore_errors=True)
