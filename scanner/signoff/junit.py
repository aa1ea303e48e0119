"""The scan as a JUnit XML test report, so a CI system shows the crosstalk check like any test suite.

One test case per victim: over budget is a failure, a victim that would fail but for waivers is
skipped with the waivers' reasons, near budget and within budget pass (near budget says so in its
output). Geometric class-pair findings are test cases of their own, and one case says whether the
whole board was checked: an incomplete scan is a failure, never a silent pass.
"""
from __future__ import annotations

import re
import xml.etree.ElementTree as ET

from scanner.scoring.results import CAUTION, ScanResult

#: characters XML 1.0 cannot carry at all
_NOT_XML = re.compile("[^\u0009\u000a\u000d\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def _text(value) -> str:
    return _NOT_XML.sub("\ufffd", str(value))


def _case(suite: ET.Element, classname: str, name: str) -> ET.Element:
    return ET.SubElement(suite, "testcase", name=_text(name), classname=_text(classname), time="0")


def _waiver_reasons(result: ScanResult, ids: list[str]) -> str:
    by_id = {w["id"]: w for w in result.waivers}
    return "; ".join(f"{i}: {by_id[i]['reason']} (accepted by {by_id[i]['accepted_by']}, {by_id[i]['accepted_on']})"
                     for i in ids if i in by_id)


def _victim_case(suite: ET.Element, result: ScanResult, v) -> str:
    case = _case(suite, f"nearfar.victims.{v.net_class}", v.net)
    used = (f"{v.budget_used_pct:.0f} % of its budget ({v.next_worst_mv:.4g} mV NEXT against "
            f"{v.next_budget_mv:.4g} mV, {v.fext_worst_mv:.4g} mV FEXT against {v.fext_budget_mv:.4g} mV)")
    waived = f"; waived aggressors {', '.join(v.waived_aggressors)}" if v.waived_aggressors else ""
    if v.status == "fail":
        failure = ET.SubElement(case, "failure", type="over-budget", message=_text(f"{v.net} uses {used}"))
        failure.text = _text(f"aggressors: {', '.join(dict.fromkeys(a['aggressor'] for a in v.aggressors))}{waived}")
        return "failure"
    if v.status_with_waived == "fail":
        ET.SubElement(case, "skipped", message=_text(
            f"waived: {_waiver_reasons(result, v.waivers)}; with the waived aggressors it would use "
            f"{v.budget_used_with_waived_pct:.0f} % of its budget"))
        return "skipped"
    ET.SubElement(case, "system-out").text = _text(f"{v.status}: {used}{waived}")
    return "pass"


def _geometric_case(suite: ET.Element, g) -> str:
    case = _case(suite, "nearfar.geometric", f"{g.victim} beside {g.aggressor}")
    detail = (f"{g.parallel_mm:.4g} mm within {g.within_spacing_mm:g} mm on {'+'.join(g.layers)} "
              f"(limit {g.max_parallel_mm:g} mm) at {g.x_mm:.2f},{g.y_mm:.2f} mm")
    if g.waived:
        ET.SubElement(case, "skipped", message=_text(f"waived: {g.waiver['id']}: {g.waiver['reason']}; {detail}"))
        return "skipped"
    ET.SubElement(case, "failure", type="geometric-limit", message=_text(detail))
    return "failure"


def _coverage_case(suite: ET.Element, result: ScanResult) -> str:
    case = _case(suite, "nearfar.coverage", "whole board checked")
    if result.unchecked:
        failure = ET.SubElement(case, "failure", type="incomplete",
                                message=_text(f"part of the board was not checked ({len(result.unchecked)} reasons)"))
        failure.text = _text("\n".join(result.unchecked))
        return "failure"
    return "pass"


def junit_xml(result: ScanResult, elapsed_s: float = 0.0) -> str:
    """The JUnit XML text of a scan: testsuites > testsuite > testcase (failure / skipped / system-out)."""
    board = result.board.get("name", "board")
    suites = ET.Element("testsuites", name="nearfar")
    suite = ET.SubElement(suites, "testsuite", name=_text(f"crosstalk {board}"),
                          timestamp=result.created.rstrip("Z"), hostname="nearfar")
    properties = ET.SubElement(suite, "properties")
    for name, value in (("run_id", result.run_id), ("verdict", result.verdict), ("caution", CAUTION)):
        ET.SubElement(properties, "property", name=f"nearfar.{name}", value=_text(value))
    outcomes = [_victim_case(suite, result, v) for v in result.victims]
    outcomes += [_geometric_case(suite, g) for g in result.geometric]
    outcomes.append(_coverage_case(suite, result))
    counts = {"tests": len(outcomes), "failures": outcomes.count("failure"), "errors": 0,
              "skipped": outcomes.count("skipped"), "time": f"{elapsed_s:.3f}"}
    for element in (suites, suite):
        element.attrib.update({k: str(v) for k, v in counts.items()})
    ET.indent(suites)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(suites, encoding="unicode") + "\n"
