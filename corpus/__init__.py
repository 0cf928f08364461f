"""The corpus: audited certificates in one SQLite store, and cross-certificate checks on it."""

from certvet.corpus.store import CertificateRow, Corpus, CorpusError

__all__ = ["CertificateRow", "Corpus", "CorpusError"]
