"""The office side of bracewalk: the hub tablets sync with over HTTP, enrolment, admin commands.

Nothing imports this package; tablets talk to it only over HTTP (ARCHITECTURE.md).
"""
