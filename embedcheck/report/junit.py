"""JUnit XML of a `check` report: one test case per chip x patch x circuit (plus the
placement-count and score rules), so CI pages list each circuit's verdict."""
from __future__ import annotations

from xml.etree import ElementTree as ET

__all__ = ["render_junit"]


def render_junit(d: dict) -> str:
    suites = ET.Element("testsuites", name=f"embedcheck {d['project']['name']}")
    total = failures = 0
    for e in d["results"]:
        suite = ET.SubElement(suites, "testsuite", name=f"{e['patch']} on {e['chip']}")
        cases = fails = 0
        outcomes = {(o["rule"], o["circuit"]): o for o in e["outcomes"]}
        for c in e["circuits"]:
            o = outcomes.get(("max_off_coupler_gates", c["circuit"]))
            case = ET.SubElement(suite, "testcase", classname=f"{e['patch']}.{e['chip']}",
                                 name=f"{c['circuit']}: no added two-qubit gates")
            cases += 1
            if o and not o["passed"]:
                fails += 1
                text = "\n".join(f"{g['file']}:{g['line']}: {g['text']} needs physical "
                                 f"{g['physical_qubits'][0]}-{g['physical_qubits'][1]} "
                                 f"({g['reason']})" for g in c["gates"])
                ET.SubElement(case, "failure", message=o["message"],
                              type="off_coupler_gates").text = text or o["message"]
        for o in e["outcomes"]:
            if o["rule"] == "max_off_coupler_gates":
                continue
            name = o["rule"] + (f": {o['circuit']}" if o["circuit"] else "")
            case = ET.SubElement(suite, "testcase", classname=f"{e['patch']}.{e['chip']}",
                                 name=name)
            cases += 1
            if not o["passed"]:
                fails += 1
                ET.SubElement(case, "failure", message=o["message"], type=o["rule"])
        suite.set("tests", str(cases))
        suite.set("failures", str(fails))
        suite.set("errors", "0")
        total, failures = total + cases, failures + fails
    suites.set("tests", str(total))
    suites.set("failures", str(failures))
    suites.set("errors", str(len(d["internal_errors"])))
    ET.indent(suites)
    return ('<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(suites, encoding="unicode")
            + "\n")
