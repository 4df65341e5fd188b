# Reference bridge core: reads {"calls": [{"fn": name, "args": {...}}, ...]}
# from stdin and writes {"results": [...]} to stdout, one result per call,
# or {"error": text} for a call that failed. Functions register with @ref.
import json
import math
import sys

FUNCS = {}


def ref(name):
    def register(f):
        FUNCS[name] = f
        return f
    return register


def clean(x):
    # JSON has no NaN; igraph reports NaN for classes it does not count.
    if isinstance(x, float) and math.isnan(x):
        return None
    if isinstance(x, dict):
        return {str(k): clean(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [clean(v) for v in x]
    return x


def main():
    req = json.load(sys.stdin)
    out = []
    for call in req["calls"]:
        try:
            out.append({"value": clean(FUNCS[call["fn"]](**call.get("args", {})))})
        except Exception as e:  # reported to Go with the call's index
            out.append({"error": "%s: %s" % (type(e).__name__, e)})
    json.dump({"results": out}, sys.stdout)
