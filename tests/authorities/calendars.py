"""Rules of the iCalendar format (RFC 5545) that the tests check, each with its section."""

# RFC 5545 section 3.1: content lines end with CRLF and are folded so that no line is longer
# than 75 octets, excluding the line break.
LINE_END = b"\r\n"
MAX_LINE_OCTETS = 75
# RFC 5545 section 3.6.1: UID and DTSTAMP are required in every VEVENT.
REQUIRED_VEVENT_PROPERTIES = ("UID", "DTSTAMP")
