"""Cross-check sluice sign-offs with an independent implementation.

Reads one JSON object on stdin:
  {"record_b64": ..., "signatures": <signatures file text>,
   "keys": {"<role>": {"private_pem": ..., "public_pem": ...}}}
and writes one JSON object on stdout with, per sign-off, what Debian's
python3-cryptography (OpenSSL) finds. Nothing here uses sluice code: the
PAE is rebuilt from the DSSE protocol.md definition, the payload type and
waiver digest from the format documented in record.SignedPayloadType
(withdrawals: the same with the base type WITHDRAWAL_TYPE, record.Withdraw),
the key fingerprint from policies.Fingerprint (sha256: + hex SHA-256 of the
key's SubjectPublicKeyInfo DER).
"""
import base64
import hashlib
import json
import sys

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization

BASE_TYPE = "application/vnd.sluice.decision+json"
WITHDRAWAL_TYPE = "application/vnd.sluice.withdrawal+json"


def pae(payload_type, payload):
    t = payload_type.encode("utf-8")
    return b"DSSEv1 %d %b %d %b" % (len(t), t, len(payload), payload)


def b64(s):
    s = s.replace("-", "+").replace("_", "/")
    return base64.b64decode(s + "=" * (-len(s) % 4), validate=True)


def expected_type(so, base=BASE_TYPE):
    t = base + "; role=" + so["role"]
    if so.get("signed_at"):
        t += '; signed-at="' + so["signed_at"] + '"'
    if so.get("waivers"):
        text = json.dumps(so["waivers"], separators=(",", ":"), ensure_ascii=False)
        t += "; waivers-sha256=" + hashlib.sha256(text.encode("utf-8")).hexdigest()
    return t


def main():
    req = json.load(sys.stdin)
    record = base64.b64decode(req["record_b64"])
    keys = {}
    out = {"keys": {}, "signoffs": []}
    for role, k in req["keys"].items():
        priv = serialization.load_pem_private_key(k["private_pem"].encode(), password=None)
        pub = serialization.load_pem_public_key(k["public_pem"].encode())
        raw = lambda key: key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
        der = pub.public_bytes(serialization.Encoding.DER, serialization.PublicFormat.SubjectPublicKeyInfo)
        keys[role] = (priv, pub)
        out["keys"][role] = {
            "pair_matches": raw(priv.public_key()) == raw(pub),
            "keyid": hashlib.sha256(der).hexdigest()[:16],
            "fingerprint": "sha256:" + hashlib.sha256(der).hexdigest(),
        }
    doc = json.loads(req["signatures"])
    out["format"] = doc["format"]
    for section, base in (("signoffs", BASE_TYPE), ("withdrawals", WITHDRAWAL_TYPE)):
        out[section] = []
        for so in doc.get(section, []):
            env = so["envelope"]
            payload = b64(env["payload"])
            sig = b64(env["signatures"][0]["sig"])
            priv, pub = keys[so["role"]]
            m = pae(env["payloadType"], payload)
            try:
                pub.verify(sig, m)
                verifies = True
            except InvalidSignature:
                verifies = False
            out[section].append({
                "role": so["role"],
                "payload_is_record": payload == record,
                "type_matches": env["payloadType"] == expected_type(so, base),
                "has_time": bool(so.get("signed_at")) and 'signed-at="' in env["payloadType"],
                "verifies": verifies,
                "resign_identical": priv.sign(m) == sig,
            })
    json.dump(out, sys.stdout, sort_keys=True)


main()
