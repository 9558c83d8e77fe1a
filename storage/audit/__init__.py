"""The audit trail: the hash-chained event log, the content each event vouches for, content
digests, verification, signed checkpoints, paging and subjects named in words.
"""

from storage.audit.checkpoint import CheckpointError, extends, make_checkpoint, read_checkpoint
from storage.audit.contents import ISSUED_TABLES, OUTCOME_TABLES, UNIT_TABLES, as_row, candidate_digest, candidate_subject, champion_digest, champion_subject, issued_digest, issued_subject, key_digest, key_subject, outcomes_digest, outcomes_subject, plan_digest, plan_subject, revocation_digest, run_final_digest, run_request_digest, run_subject, series_digest, series_subject, unit_digest, unit_subject, version_digest, version_subject
from storage.audit.digest import Row, canonical_json, sha256_text
from storage.audit.log import AuditEntry, entry_of, lock_audit_log, record_event
from storage.audit.pages import audit_page
from storage.audit.subjects import describe_subjects
from storage.audit.verify import AuditReport, verify_audit_log

__all__ = [
    "AuditEntry",
    "AuditReport",
    "CheckpointError",
    "ISSUED_TABLES",
    "OUTCOME_TABLES",
    "Row",
    "UNIT_TABLES",
    "as_row",
    "audit_page",
    "candidate_digest",
    "candidate_subject",
    "canonical_json",
    "champion_digest",
    "champion_subject",
    "describe_subjects",
    "entry_of",
    "extends",
    "issued_digest",
    "issued_subject",
    "key_digest",
    "key_subject",
    "lock_audit_log",
    "make_checkpoint",
    "outcomes_digest",
    "outcomes_subject",
    "plan_digest",
    "plan_subject",
    "read_checkpoint",
    "record_event",
    "revocation_digest",
    "run_final_digest",
    "run_request_digest",
    "run_subject",
    "series_digest",
    "series_subject",
    "sha256_text",
    "unit_digest",
    "unit_subject",
    "verify_audit_log",
    "version_digest",
    "version_subject",
]
