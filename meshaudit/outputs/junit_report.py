"""JUnit XML for CI systems: one test case per rule.

Rules are the validity checks (one per flag kind) and every limit of the profile for the
element families present. A fail-limit rule fails when any element is past it; a
warn-limit rule fails only when the audit runs with ``fail_on="warn"`` (otherwise it
passes and reports its count in system-out), so the XML agrees with the exit status.
Each mesh-level finding kind is one more rule, failing when its finding fails the mesh.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np

from ..cells.registry import CELL_TYPES
from ..judge.finding_kinds import KIND_INFO, KIND_NAMES
from ..judge.profiles import Profile
from ..judge.verdicts import FAIL, INVALID_FLAGS, WARN
from ..metrics import METRIC_INFO, WARNING_FLAGS
from ..results.report import Report
from .safe_text import xml_safe

#: How many element ids a failure message names.
WORST_IDS = 10


def _ids(report: Report, mask: np.ndarray, key: np.ndarray | None = None) -> str:
    rows = np.flatnonzero(mask)
    if key is not None:
        rows = rows[np.argsort(key[rows], kind="stable")]
    shown = ", ".join(str(int(report.ids[r])) for r in rows[:WORST_IDS])
    more = f" and {rows.size - WORST_IDS} more" if rows.size > WORST_IDS else ""
    return shown + more


def _case(suite: ET.Element, classname: str, name: str, failed: bool, message: str) -> None:
    case = ET.SubElement(suite, "testcase", classname=classname, name=name, time="0")
    if failed:
        node = ET.SubElement(case, "failure", message=message, type="meshaudit")
        node.text = message
    else:
        ET.SubElement(case, "system-out").text = message


def _warning_flags_that_apply(report: Report) -> list[str]:
    """Warning flags this mesh can raise: quarter points need quadratic elements, flipped
    normals a mesh without absolute orientation (a shell, or a plane containing z).
    They fail their case only with ``--fail-on warn``, like warn limits."""
    applies = {
        "quarter_point": any(CELL_TYPES[t].is_quadratic for t in report.cell_types),
        "flipped_normal": report.summary.orientation == "relative",
    }
    return [f for f in WARNING_FLAGS if applies.get(f, True)]


def finding_cases(suite: ET.Element, report: Report) -> None:
    """One test case per mesh-level finding kind the profile enables: it fails when the
    finding occurs and its severity fails the mesh; kinds that do not apply to this
    geometry (winding on a shell, say) are marked skipped."""
    found = {f.kind: f for f in report.findings}
    failing = {f.kind for f in report.failing_findings}
    settings = report.profile.findings
    solids = any(CELL_TYPES[t].dimension == 3 for t in report.cell_types)
    for kind in KIND_NAMES:
        if not settings.enabled(kind) or (KIND_INFO[kind].solid and not solids):
            continue  # the checks of solids are not listed for a mesh without solids
        if KIND_INFO[kind].material and report.materials is None:
            continue  # checked only with a material
        name = f"no {kind.replace('_', ' ')}"
        if not KIND_INFO[kind].applies_to(report.summary.frame, report.summary.orientation):
            case = ET.SubElement(
                suite, "testcase", classname="meshaudit.findings", name=name, time="0"
            )
            if report.summary.frame == "solid":
                why = (
                    "not checked: the mesh has no surface elements, whose edges this check looks at"
                )
            else:
                why = (
                    f"not checked on a {report.summary.frame} mesh "
                    f"(orientation {report.summary.orientation})"
                )
            ET.SubElement(case, "skipped", message=why)
            continue
        f = found.get(kind)
        if f is None:
            msg = f"none found (severity {settings.severity[kind]})"
        else:
            msg = f"{f.severity}: {f.message}"
        _case(suite, "meshaudit.findings", name, kind in failing, msg)


def region_text(entry: dict) -> str:
    """One region of the breakdown in words: elements, verdict counts, lowest score."""
    c = entry["counts"]
    return (
        f"{entry['elements']} elements: {c['fail']} fail, {c['warn']} warn, {c['ok']} ok; "
        f"lowest score {entry['worst_score']:.3f}; judged under {', '.join(entry['profiles'])}"
    )


def render(report: Report) -> str:
    source = report.summary.source
    suite = ET.Element("testsuite", name=f"meshaudit {source}")
    properties = ET.SubElement(suite, "properties")
    skipped = report.summary.skipped_text() or "none"
    ET.SubElement(properties, "property", name="cells not audited", value=skipped)
    for entry in report.region_breakdown():
        ET.SubElement(
            properties, "property", name=f"region {entry['region']}", value=region_text(entry)
        )
    for flag in INVALID_FLAGS:
        mask = report.flag(flag)
        n = int(mask.sum())
        msg = f"{n} element(s) {flag.replace('_', '-')}" + (
            f"; ids: {_ids(report, mask)}" if n else ""
        )
        _case(suite, "meshaudit.validity", f"no {flag} elements", n > 0, msg)
    warn_fails = report.fail_on == "warn"
    for flag in _warning_flags_that_apply(report):
        mask = report.flag(flag)
        n = int(mask.sum())
        msg = f"{n} element(s) {flag.replace('_', '-')}" + (
            f"; ids: {_ids(report, mask)}" if n else ""
        )
        _case(suite, "meshaudit.warnings", f"no {flag} elements", n > 0 and warn_fails, msg)
    for classname, profile, in_group in _limit_groups(report):
        _limit_cases(suite, report, classname, profile, in_group)
    finding_cases(suite, report)
    cases = suite.findall("testcase")
    suite.set("tests", str(len(cases)))
    suite.set("failures", str(sum(1 for c in cases if c.find("failure") is not None)))
    suite.set("errors", "0")
    suite.set("skipped", str(sum(1 for c in cases if c.find("skipped") is not None)))
    root = ET.Element("testsuites", name="meshaudit")
    root.append(suite)
    ET.indent(root)
    text = ET.tostring(root, encoding="unicode")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + xml_safe(text) + "\n"


def _limit_groups(report: Report) -> list[tuple[str, Profile, np.ndarray]]:
    """(class name, profile, element mask) per set of elements judged under one profile:
    the main profile, then each region of the file that has limits of its own."""
    codes = report.region_codes
    if codes is None or not report.region_names:
        return [("meshaudit", report.profile, np.ones(len(report), dtype=bool))]
    groups = [("meshaudit", report.profile, codes == 0)]
    for k, name in enumerate(report.region_names, start=1):
        groups.append((f"meshaudit.region.{name}", report.region_profiles[k - 1], codes == k))
    return groups


def _limit_cases(
    suite: ET.Element, report: Report, classname: str, profile: Profile, in_group: np.ndarray
) -> None:
    """One case per warn and per fail limit of ``profile``, over the elements in_group."""
    warn_fails = report.fail_on == "warn"
    for f_code, family in enumerate(report.cell_families):
        in_family = (report.families == f_code) & in_group
        if not in_family.any():
            continue
        for metric, limit in profile.limits.get(family, {}).items():
            worse = METRIC_INFO[metric].worse
            sign = "<=" if worse == "high" else ">="
            values = report.metrics[metric]
            key = -values if worse == "high" else values
            lvl = report.levels.get(metric, np.zeros(len(report), dtype=np.int8))
            for kind, code, threshold in (("fail", FAIL, limit.fail), ("warn", WARN, limit.warn)):
                if threshold is None:
                    continue
                mask = in_family & (lvl >= code)
                n = int(mask.sum())
                name = f"{family} {metric} {sign} {threshold:g} ({kind} limit)"
                msg = f"{n} {family} element(s) past the {kind} limit"
                if n:
                    msg += f"; worst ids: {_ids(report, mask, key)}"
                _case(
                    suite,
                    f"{classname}.{family}",
                    name,
                    n > 0 and (kind == "fail" or warn_fails),
                    msg,
                )
