# CPU per request of /openapi/v1.json and /readyz (SECURITY.md, "Resource bounds").
# Usage: python3 probes.py src/TeachServe.Server/bin/Release/net10.0/TeachServe.Server.dll PORT
import os, subprocess, sys, tempfile, time, urllib.request, shutil
dll, port = sys.argv[1], int(sys.argv[2])
data = tempfile.mkdtemp(prefix="bounds-probes-")
env = dict(os.environ, TeachServe__AdminKey="tsa.measure-admin-key-0123456789abcdef", TeachServe__DataDirectory=data,
           TeachServe__LoadDemo="false", TeachServe__PrintStartupBanner="false", Logging__LogLevel__Default="Warning")
proc = subprocess.Popen(["dotnet", dll, "--urls", f"http://127.0.0.1:{port}"], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
base = f"http://127.0.0.1:{port}"
for _ in range(600):
    try:
        urllib.request.urlopen(base + "/healthz", timeout=5); break
    except Exception: time.sleep(0.1)
def cpu():
    f = open(f"/proc/{proc.pid}/stat").read().split(")")[1].split()
    return (int(f[11]) + int(f[12])) / os.sysconf("SC_CLK_TCK")
for path in ["/openapi/v1.json", "/readyz"]:
    urllib.request.urlopen(base + path).read()  # warm
    c0, t0 = cpu(), time.perf_counter()
    n = 200
    for _ in range(n): urllib.request.urlopen(base + path).read()
    print(f"{path}: {(cpu() - c0) / n * 1000:.2f} ms server CPU per request, {(time.perf_counter() - t0) / n * 1000:.2f} ms wall")
proc.terminate(); proc.wait(); shutil.rmtree(data, ignore_errors=True)
