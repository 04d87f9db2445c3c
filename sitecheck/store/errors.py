"""Errors the store raises. Each message says what went wrong and how to put it right."""


class StoreError(Exception):
    """Base class: anything the store refuses to do."""


class NotFound(StoreError):
    """The object does not exist on this site (or at all: callers must not tell the two apart)."""


class Conflict(StoreError):
    """The change clashes with what is already stored."""


class DuplicateEmail(Conflict):
    pass


class DuplicateReference(Conflict):
    pass


class AlreadyMember(Conflict):
    pass


class UuidInUse(Conflict):
    """A client-made UUID is already stored for a different bearing, record or person."""


class SameIdOtherValues(UuidInUse):
    """The same person sent the same record or photo id again with other contents.

    A resend after a lost answer carries the same contents and gets the first answer; other
    contents under one id are a second record that would otherwise be dropped unseen.
    ``differs`` names what differs (field names, never the stored values).
    """

    def __init__(self, message: str, differs: tuple[str, ...] = ()):
        super().__init__(message)
        self.differs = differs


class TooManyPhotos(Conflict):
    """The as-built record already has as many photos as one record may have."""


class StaleState(Conflict):
    """The bearing changed since the caller read it; reload and try again."""


class LastEngineer(Conflict):
    """The change would leave a site with no engineer: no one could decide or invite."""
