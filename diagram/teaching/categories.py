"""The kinds of identifier the teaching export removes and looks for (no values, only kinds).

HIPAA Safe Harbor (45 CFR 164.514(b)(2)) lists them; the audit, the review list and every
message name a case's identifiers only by these categories.
"""

from __future__ import annotations

from enum import StrEnum


class Category(StrEnum):
    """What kind of identifier was removed or found (the audit and messages name only this)."""

    NAME = "name"
    PATIENT_ID = "patient-id"
    BIRTH_DATE = "birth-date"
    EXAM_DATE = "exam-date"
    ACCESSION = "accession"
    SITE = "site"
    OPERATOR = "operator"
    REFERRER = "referrer"
    STUDY_UID = "study-uid"
    PRIOR = "prior-path"
    DATE = "date"
    PHONE = "phone"
    EMAIL = "e-mail"
    URL = "url"
    IP_ADDRESS = "ip-address"
    LONG_NUMBER = "long-number"
    AGE = "age-over-89"
    POSTCODE = "postcode"
    PLACE = "place"  # a street address, a county, map coordinates
    CODE = "id-code"  # a serial number, licence plate, account or policy number
    METADATA = "document-metadata"  # a metadata field or element a teaching output must not hold
    FREE_TEXT = "free-text"  # notes, indication and comments (withheld unless kept for review)
