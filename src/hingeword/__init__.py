"""hingeword: governor-preposition patterns in learner writing, compared with native use."""

__version__ = "0.1.0"

#: Version of the extraction rules. Bump it whenever extract.py changes what it
#: counts: references and cached runs record it, so mixed versions are detectable.
EXTRACTOR_VERSION = "5"
