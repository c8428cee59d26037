"""History: the findings sidecar a build leaves beside its report, and what changed between builds.

=========================  ======================================================
Module                     What it holds
=========================  ======================================================
:mod:`.sidecar`            the sidecar of a report on several variables or groups
:mod:`.changes`            two Findings -> what changed, and whether it is worth saying
=========================  ======================================================
"""
