#!/usr/bin/env bash
# Validates deploy/kubernetes/ offline: the schemas of a pinned Kubernetes version,
# a security lint, and the settings that must agree across files.
#
# Usage: bash deploy/validate-manifests.sh
# Tools (deploy/requirements.txt) live in their own virtual environment,
# .venv-deploy, made on first use (about 30 s): checkov 3.3.30 pins packaging<24,
# while pytest in the test environment .venv (schemathesis needs it) requires
# packaging>=24, so one environment cannot hold both.
set -euo pipefail
cd "$(dirname "$0")/.."
VENV=.venv-deploy
# The Kubernetes versions validated against: 1.31 is the oldest one the manifests
# are meant for (pinned); 1.37 the newest kubernetes-validate 1.37.0 ships schemas for.
K8S_VERSIONS="1.31.0 1.37.0"
# Checks skipped, each with its reason:
#   CKV_K8S_43 "Image should use digest": the image is pinned by its version tag
#     (residue:0.1.0); its digest exists only once it is pushed to the operator's
#     registry, who should then pin it as residue:0.1.0@sha256:...
SKIP_CHECKS="CKV_K8S_43"

want=$(grep -v -e '^#' -e '^$' deploy/requirements.txt | sort)
have=$("$VENV/bin/pip" freeze 2>/dev/null | grep -xF -f <(echo "$want") | sort || true)
if [ "$want" != "$have" ]; then
  echo "installing deploy/requirements.txt into $VENV"
  python3 -m venv "$VENV"
  "$VENV/bin/pip" install -q -r deploy/requirements.txt
fi
# The flags of the binary, when one is built, to hold the ConfigMap to them.
RESIDUE_HELP=$( (target/debug/residue --help || target/release/residue --help) 2>/dev/null || true)
export RESIDUE_HELP
MANIFESTS=(deploy/kubernetes/*.yaml)
failed=0

echo "== schemas (kubernetes-validate $("$VENV/bin/kubernetes-validate" --version 2>&1 | tail -n 1), --strict)"
for version in $K8S_VERSIONS; do
  "$VENV/bin/kubernetes-validate" --strict --quiet -k "$version" "${MANIFESTS[@]}" || failed=1
  [ "$failed" = 0 ] && echo "  ${#MANIFESTS[@]} files valid against Kubernetes $version"
done

echo "== security lint (checkov $("$VENV/bin/checkov" --version), Kubernetes framework; skipped: $SKIP_CHECKS)"
# --skip-download: offline, no guideline or severity download.
"$VENV/bin/checkov" -d deploy/kubernetes --framework kubernetes --compact --quiet \
  --skip-download --skip-check "$SKIP_CHECKS" || failed=1

echo "== settings that must agree across the files"
"$VENV/bin/python" - "${MANIFESTS[@]}" <<'PY' || failed=1
import re, sys, yaml
docs = {}
for path in sys.argv[1:]:
    for d in yaml.safe_load_all(open(path)):
        if d:
            docs[d["kind"]] = d
problems = []
def need(ok, what):
    print(("  ok   " if ok else "  FAIL ") + what)
    if not ok:
        problems.append(what)
config = docs["ConfigMap"]["data"]
dep = docs["Deployment"]["spec"]
pod = dep["template"]["spec"]
c = pod["containers"][0]
delay = int(config["RESIDUE_SHUTDOWN_DELAY_SECS"])
drain = int(config["RESIDUE_REQUEST_TIMEOUT_SECS"]) + int(config["RESIDUE_HEADER_TIMEOUT_SECS"])
grace = pod["terminationGracePeriodSeconds"]
need(grace > delay + drain,
     f"terminationGracePeriodSeconds {grace} > shutdown delay {delay} + drain limit {drain} s")
need(delay >= 5, f"shutdown delay {delay} s leaves the endpoint update time (at least 5 s)")
need(dep["replicas"] >= 2 and docs["HorizontalPodAutoscaler"]["spec"]["minReplicas"] >= 2,
     "at least 2 replicas, and the autoscaler's minimum too")
need(c["livenessProbe"]["httpGet"]["path"] == "/healthz"
     and c["readinessProbe"]["httpGet"]["path"] == "/readyz",
     "liveness on /healthz, readiness on /readyz")
port = int(config["RESIDUE_ADDR"].rsplit(":", 1)[1])
need(c["ports"][0]["containerPort"] == port, f"the container port is the listen port {port}")
version = re.search(r'^version = "(.*)"', open("Cargo.toml").read(), re.M).group(1)
need(c["image"] == f"residue:{version}", f"the image is residue:{version} (Cargo.toml)")
flags = set(re.findall(r"env: (RESIDUE_[A-Z_]+)=", __import__("os").environ["RESIDUE_HELP"]))
if flags:
    # Each flag is set, or named in a comment (the optional ones without a default).
    text = open("deploy/kubernetes/10-configmap.yaml").read()
    missing = sorted(f for f in flags if f not in config and f"# {f}:" not in text)
    need(not missing, f"the ConfigMap sets or names every flag of `residue --help` "
                      f"({len(flags)} flags){': missing ' + ', '.join(missing) if missing else ''}")
    guide = open("docs/operating.md").read()
    undocumented = sorted(f for f in flags if f"`{f}`" not in guide)
    need(not undocumented, "docs/operating.md names every flag's variable"
                           f"{': missing ' + ', '.join(undocumented) if undocumented else ''}")
if problems:
    sys.exit(1)
PY

if [ "$failed" -ne 0 ]; then echo "manifests: FAILED"; exit 1; fi
echo "manifests: valid"
