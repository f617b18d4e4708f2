"""JUnit XML: one test case per checked file, failing when the file has findings.

CI services that read JUnit results then list each netlist as passed or failed.
Every finding fails its file's case (the run's ``--fail-on`` decides the exit code,
not this report); the failure's text lists the findings as the text report does.
No timestamps or host names: identical input gives identical bytes.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

from lintamp.findings import Report
from lintamp.report.base import Reporter


class JunitReporter(Reporter):
    def finish(self, report: Report) -> None:
        by_file: dict[str, list] = {path: [] for path in report.files}
        for finding in self.findings:
            by_file.setdefault(finding.location.path, []).append(finding)
        failing = sum(1 for found in by_file.values() if found)
        counts = {"tests": str(len(by_file)), "failures": str(failing), "errors": "0", "skipped": "0"}
        suites = ET.Element("testsuites", {"name": "lintamp", **counts})
        suite = ET.SubElement(suites, "testsuite", {"name": "lintamp", **counts})
        properties = ET.SubElement(suite, "properties")
        ET.SubElement(properties, "property", {"name": "lintamp.version", "value": self.tool_version})
        for path in sorted(by_file):
            safe_path = xml_safe(path)
            case = ET.SubElement(suite, "testcase", {"classname": "lintamp", "name": safe_path, "file": safe_path})
            found = by_file[path]
            if not found:
                continue
            worst = max(f.severity for f in found)
            rules = sorted({f.rule for f in found})
            failure = ET.SubElement(case, "failure", {
                "message": xml_safe(f"{len(found)} finding{'s' if len(found) != 1 else ''}: {', '.join(rules)}"),
                "type": worst.label})
            failure.text = xml_safe("\n".join(_lines(f) for f in found))
        ET.indent(suites)
        self.stream.write('<?xml version="1.0" encoding="UTF-8"?>\n')
        self.stream.write(ET.tostring(suites, encoding="unicode") + "\n")


def _lines(finding) -> str:
    lines = [f"{finding.location}: {finding.severity.label} {finding.rule}: {finding.message}"]
    lines += [f"    {step}" for step in finding.explanation]
    if finding.fix:
        lines.append(f"    fix: {finding.fix}")
    return "\n".join(lines)


# Characters XML 1.0 cannot carry at all, even escaped (netlist text is untrusted).
_NOT_XML = re.compile("[^\t\n\r\x20-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def xml_safe(text: str) -> str:
    return _NOT_XML.sub("\ufffd", text)
