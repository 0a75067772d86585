"""One hand-built ``Doc`` per extraction rule and filter (no model: words, tags, POS,
heads and labels are written out as the small English pipeline would give them).

Each test names the rule of :mod:`hingeword.extract` it pins; removing that rule makes it
fail. Sentences are invented for these tests.
"""

from __future__ import annotations

import pytest
import spacy
from spacy.tokens import Doc

from hingeword.extract import extract_doc, is_temporal, repaired_pos

VOCAB = spacy.blank("en").vocab  # English lexical attributes (lower, is_alpha, like_num); no model


def make(*rows: tuple[str, str, str, str, int, str]) -> Doc:
    """Rows of (word, tag, POS, dep, head index, lemma); the head of the root is itself."""
    words, tags, pos, deps, heads, lemmas = zip(*rows)
    return Doc(VOCAB, words=list(words), tags=list(tags), pos=list(pos), deps=list(deps), heads=list(heads),
               lemmas=list(lemmas))


def keys(doc: Doc) -> list[tuple[str, str, str]]:
    return [a.key for a in extract_doc(doc)]


def test_extract_rule_prep_dependent_of_a_verb():
    # "We depend of money ."
    doc = make(("We", "PRP", "PRON", "nsubj", 1, "we"), ("depend", "VBP", "VERB", "ROOT", 1, "depend"),
               ("of", "IN", "ADP", "prep", 1, "of"), ("money", "NN", "NOUN", "pobj", 2, "money"),
               (".", ".", "PUNCT", "punct", 1, "."))
    assert keys(doc) == [("depend", "VERB", "of")]


def test_extract_rule_direct_object_is_the_zero_slot_spanning_the_object_phrase():
    # "I listen the radio ."
    doc = make(("I", "PRP", "PRON", "nsubj", 1, "I"), ("listen", "VBP", "VERB", "ROOT", 1, "listen"),
               ("the", "DT", "DET", "det", 3, "the"), ("radio", "NN", "NOUN", "dobj", 1, "radio"),
               (".", ".", "PUNCT", "punct", 1, "."))
    [a] = extract_doc(doc)
    assert a.key == ("listen", "VERB", "-") and a.relation == "dobj"
    assert doc.text[a.prep_start:a.prep_end] == "the radio"


def test_extract_rule_governors_are_verbs_adjectives_nouns_only():
    # "He in the garden ." with a pronoun head, and a proper noun head "Paris of dreams"
    doc = make(("Paris", "NNP", "PROPN", "ROOT", 0, "Paris"), ("of", "IN", "ADP", "prep", 0, "of"),
               ("dreams", "NNS", "NOUN", "pobj", 1, "dream"))
    assert keys(doc) == []
    doc = make(("a", "DT", "DET", "det", 1, "a"), ("city", "NN", "NOUN", "ROOT", 1, "city"),
               ("of", "IN", "ADP", "prep", 1, "of"), ("dreams", "NNS", "NOUN", "pobj", 2, "dream"))
    assert keys(doc) == [("city", "NOUN", "of")]


def test_extract_rule_passive_agent_by():
    # "It was written by her ."
    doc = make(("It", "PRP", "PRON", "nsubjpass", 2, "it"), ("was", "VBD", "AUX", "auxpass", 2, "be"),
               ("written", "VBN", "VERB", "ROOT", 2, "write"), ("by", "IN", "ADP", "agent", 2, "by"),
               ("her", "PRP", "PRON", "pobj", 3, "she"), (".", ".", "PUNCT", "punct", 2, "."))
    [a] = extract_doc(doc)
    assert a.key == ("write", "VERB", "by") and a.relation == "agent"


def test_extract_rule_dative_only_when_it_is_a_preposition():
    # "Give it to her ." counts "to"; "Give her it ." (bare dative, a pronoun) does not
    to = make(("Give", "VB", "VERB", "ROOT", 0, "give"), ("it", "PRP", "PRON", "dobj", 0, "it"),
              ("to", "IN", "ADP", "dative", 0, "to"), ("her", "PRP", "PRON", "pobj", 2, "she"))
    assert ("give", "VERB", "to") in keys(to)
    bare = make(("Give", "VB", "VERB", "ROOT", 0, "give"), ("her", "PRP", "PRON", "dative", 0, "she"),
                ("it", "PRP", "PRON", "dobj", 0, "it"))
    assert keys(bare) == [("give", "VERB", "-")]


def test_extract_rule_particle():
    # "They gave up ."
    doc = make(("They", "PRP", "PRON", "nsubj", 1, "they"), ("gave", "VBD", "VERB", "ROOT", 1, "give"),
               ("up", "RP", "ADP", "prt", 1, "up"), (".", ".", "PUNCT", "punct", 1, "."))
    assert keys(doc) == [("give", "VERB", "up")]


def test_extract_rule_stranded_preposition_counts():
    # "the topic we talked about"
    doc = make(("the", "DT", "DET", "det", 1, "the"), ("topic", "NN", "NOUN", "ROOT", 1, "topic"),
               ("we", "PRP", "PRON", "nsubj", 3, "we"), ("talked", "VBD", "VERB", "relcl", 1, "talk"),
               ("about", "IN", "ADP", "prep", 3, "about"))
    assert keys(doc) == [("talk", "VERB", "about")]


def test_extract_filter_than_is_not_a_preposition():
    # "better than that"
    doc = make(("better", "JJR", "ADJ", "ROOT", 0, "well"), ("than", "IN", "ADP", "prep", 0, "than"),
               ("that", "DT", "PRON", "pobj", 1, "that"))
    assert keys(doc) == []


def test_extract_filter_non_alphabetic_prepositions_left_out():
    # a tokeniser slip: "-" read as a preposition
    doc = make(("go", "VB", "VERB", "ROOT", 0, "go"), ("--", ":", "ADP", "prep", 0, "--"),
               ("home", "NN", "NOUN", "pobj", 1, "home"))
    assert keys(doc) == []


def test_extract_rule_infinitival_to_is_never_a_preposition():
    # "I want to go ." — "to" is aux of "go"
    doc = make(("I", "PRP", "PRON", "nsubj", 1, "I"), ("want", "VBP", "VERB", "ROOT", 1, "want"),
               ("to", "TO", "PART", "aux", 3, "to"), ("go", "VB", "VERB", "xcomp", 1, "go"),
               (".", ".", "PUNCT", "punct", 1, "."))
    assert keys(doc) == []


def test_extract_rule_multiword_preposition_kept_whole():
    # "She stood in front of the house ."
    doc = make(("She", "PRP", "PRON", "nsubj", 1, "she"), ("stood", "VBD", "VERB", "ROOT", 1, "stand"),
               ("in", "IN", "ADP", "prep", 1, "in"), ("front", "NN", "NOUN", "pobj", 2, "front"),
               ("of", "IN", "ADP", "prep", 3, "of"), ("the", "DT", "DET", "det", 6, "the"),
               ("house", "NN", "NOUN", "pobj", 4, "house"), (".", ".", "PUNCT", "punct", 1, "."))
    assert keys(doc) == [("stand", "VERB", "in front of")]  # not also "stand in" or "front of"


def test_extract_rule_multiword_needs_a_prepositional_first_word():
    # "It is up to you" counts "up to"; in "pick up toys" the words are not a preposition
    up_to = make(("It", "PRP", "PRON", "nsubj", 1, "it"), ("depends", "VBZ", "VERB", "ROOT", 1, "depend"),
                 ("up", "RB", "ADV", "advmod", 1, "up"), ("to", "IN", "ADP", "prep", 2, "to"),
                 ("you", "PRP", "PRON", "pobj", 3, "you"))
    assert keys(up_to) == [("depend", "VERB", "up to")]
    # "out of" where "out" is the object's compound: not a preposition
    not_mw = make(("get", "VB", "VERB", "ROOT", 0, "get"), ("out", "NN", "NOUN", "nsubj", 0, "out"),
                  ("of", "IN", "ADP", "prep", 1, "of"), ("it", "PRP", "PRON", "pobj", 2, "it"))
    assert ("get", "VERB", "out of") not in keys(not_mw)


@pytest.mark.parametrize("obj, lemma, temporal", [
    ("Thursday", "Thursday", True),  # a weekday
    ("2010", "2010", True),  # a year
    ("10:30", "10:30", True),  # a clock time
    ("town", "town", False),  # a place: kept
])
def test_extract_filter_temporal_adjunct(obj, lemma, temporal):
    # "We came on Thursday ." / "in 2010" / "at 10:30"
    doc = make(("We", "PRP", "PRON", "nsubj", 1, "we"), ("came", "VBD", "VERB", "ROOT", 1, "come"),
               ("on", "IN", "ADP", "prep", 1, "on"), (obj, "NNP", "PROPN", "pobj", 2, lemma))
    assert is_temporal(doc[2]) is temporal
    assert keys(doc) == ([] if temporal else [("come", "VERB", "on")])


def test_extract_filter_temporal_only_for_time_prepositions():
    # "talk about the weekend": "about" is chosen by the governor, whatever its object means
    doc = make(("talk", "VB", "VERB", "ROOT", 0, "talk"), ("about", "IN", "ADP", "prep", 0, "about"),
               ("the", "DT", "DET", "det", 3, "the"), ("weekend", "NN", "NOUN", "pobj", 1, "weekend"))
    assert keys(doc) == [("talk", "VERB", "about")]


def test_extract_rule_no_propagation_over_coordination():
    # "We cooked and talked about it": "about" hangs on "talked" only
    doc = make(("We", "PRP", "PRON", "nsubj", 1, "we"), ("cooked", "VBD", "VERB", "ROOT", 1, "cook"),
               ("and", "CC", "CCONJ", "cc", 1, "and"), ("talked", "VBD", "VERB", "conj", 1, "talk"),
               ("about", "IN", "ADP", "prep", 3, "about"), ("it", "PRP", "PRON", "pobj", 4, "it"))
    assert keys(doc) == [("talk", "VERB", "about")]


def test_extract_repair_verb_read_as_plural_noun():
    # rule 1: "Our school lacks of money" read as a verbless noun phrase rooted on "lacks"
    doc = make(("Our", "PRP$", "PRON", "poss", 2, "our"), ("school", "NN", "NOUN", "compound", 2, "school"),
               ("lacks", "NNS", "NOUN", "ROOT", 2, "lack"), ("of", "IN", "ADP", "prep", 2, "of"),
               ("money", "NN", "NOUN", "pobj", 3, "money"))
    assert repaired_pos(doc[2]) == "VERB"
    assert keys(doc) == [("lack", "VERB", "of")]


def test_extract_repair_copula_gives_the_preposition_to_the_adjective():
    # rule 2: "She is good at maths" with "at" on the copula
    doc = make(("She", "PRP", "PRON", "nsubj", 1, "she"), ("is", "VBZ", "AUX", "ROOT", 1, "be"),
               ("good", "JJ", "ADJ", "acomp", 1, "good"), ("at", "IN", "ADP", "prep", 1, "at"),
               ("maths", "NN", "NOUN", "pobj", 3, "maths"))
    assert keys(doc) == [("good", "ADJ", "at")]
    # without an adjective complement the copula is not a governor
    bare = make(("She", "PRP", "PRON", "nsubj", 1, "she"), ("is", "VBZ", "AUX", "ROOT", 1, "be"),
                ("at", "IN", "ADP", "prep", 1, "at"), ("home", "NN", "NOUN", "pobj", 2, "home"))
    assert keys(bare) == []
    # a preposition before the adjective modifies the clause: "In my opinion it is free"
    opinion = make(("In", "IN", "ADP", "prep", 4, "in"), ("my", "PRP$", "PRON", "poss", 2, "my"),
                   ("opinion", "NN", "NOUN", "pobj", 0, "opinion"), ("it", "PRP", "PRON", "nsubj", 4, "it"),
                   ("is", "VBZ", "AUX", "ROOT", 4, "be"), ("free", "JJ", "ADJ", "acomp", 4, "free"))
    assert keys(opinion) == []


def test_extract_repair_coordinated_preposition_counts_for_the_first_governor():
    # rule 3: "interested in music and in art"
    doc = make(("interested", "JJ", "ADJ", "ROOT", 0, "interested"), ("in", "IN", "ADP", "prep", 0, "in"),
               ("music", "NN", "NOUN", "pobj", 1, "music"), ("and", "CC", "CCONJ", "cc", 1, "and"),
               ("in", "IN", "ADP", "conj", 1, "in"), ("art", "NN", "NOUN", "pobj", 4, "art"))
    assert keys(doc) == [("interested", "ADJ", "in"), ("interested", "ADJ", "in")]


def test_extract_repair_particle_labelled_advmod():
    # rule 4: "We went out ." with "out" tagged RP but labelled advmod
    doc = make(("We", "PRP", "PRON", "nsubj", 1, "we"), ("went", "VBD", "VERB", "ROOT", 1, "go"),
               ("out", "RP", "ADP", "advmod", 1, "out"), (".", ".", "PUNCT", "punct", 1, "."))
    [a] = extract_doc(doc)
    assert a.key == ("go", "VERB", "out") and a.relation == "prt"


@pytest.mark.parametrize("word, pos, lemma, counted", [
    ("time", "NOUN", "time", False),  # "waited a long time": a time expression
    ("home", "ADV", "home", False),  # "went home" mis-labelled as an object
    ("bus", "NOUN", "bus", True),  # "waited the bus": a real (learner) object
])
def test_extract_filter_adverbial_objects_are_not_direct_objects(word, pos, lemma, counted):
    doc = make(("I", "PRP", "PRON", "nsubj", 1, "I"), ("waited", "VBD", "VERB", "ROOT", 1, "wait"),
               ("the", "DT", "DET", "det", 3, "the"), (word, "NN", pos, "dobj", 1, lemma))
    assert keys(doc) == ([("wait", "VERB", "-")] if counted else [])


# --- the class of the object -------------------------------------------------


def _arrive(prep: str, *obj: tuple[str, str, str, str]) -> Doc:
    """ "We arrived PREP OBJ ." with the object's words as (word, tag, POS, lemma), head last."""
    rows = [("We", "PRP", "PRON", "nsubj", 1, "we"), ("arrived", "VBD", "VERB", "ROOT", 1, "arrive"),
            (prep, "IN", "ADP", "prep", 1, prep)]
    head = 3 + len(obj) - 1
    for i, (word, tag, pos, lemma) in enumerate(obj):
        dep = "pobj" if 3 + i == head else ("compound" if pos == "PROPN" else "det")
        rows.append((word, tag, pos, dep, head if 3 + i != head else 2, lemma))
    rows.append((".", ".", "PUNCT", "punct", 1, "."))
    return make(*rows)


@pytest.mark.parametrize("obj,cls", [
    ((("Rome", "NNP", "PROPN", "Rome"),), "place"),  # WordNet's first sense of "Rome": a location
    ((("New", "NNP", "PROPN", "New"), ("York", "NNP", "PROPN", "York")), "place"),  # with its compound
    ((("Marta", "NNP", "PROPN", "Marta"),), "name"),  # unknown proper noun: no entity recogniser
    ((("John", "NNP", "PROPN", "John"),), "name"),  # WordNet's common "john" is not a place
    ((("the", "DT", "DET", "the"), ("station", "NN", "NOUN", "station")), "building"),
    ((("the", "DT", "DET", "the"), ("concert", "NN", "NOUN", "concert")), "idea"),  # a performance: communication
    ((("the", "DT", "DET", "the"), ("accident", "NN", "NOUN", "accident")), "event"),
    ((("my", "PRP$", "PRON", "my"), ("friends", "NNS", "NOUN", "friend")), "person"),  # lemma looked up
    ((("them", "PRP", "PRON", "they"),), "person"),
    ((("it", "PRP", "PRON", "it"),), "other"),
    ((("the", "DT", "DET", "the"), ("glorpfest", "NN", "NOUN", "glorpfest")), "other"),  # not in WordNet
])
def test_extract_object_class_of_the_prepositions_object(obj, cls):
    [a] = extract_doc(_arrive("at", *obj))
    assert a.key == ("arrive", "VERB", "at") and a.object_class == cls


def test_extract_object_class_of_a_gerund_and_of_a_direct_object():
    # "She is good at swimming ."
    doc = make(("She", "PRP", "PRON", "nsubj", 1, "she"), ("is", "VBZ", "AUX", "ROOT", 1, "be"),
               ("good", "JJ", "ADJ", "acomp", 1, "good"), ("at", "IN", "ADP", "prep", 2, "at"),
               ("swimming", "VBG", "VERB", "pcomp", 3, "swim"), (".", ".", "PUNCT", "punct", 1, "."))
    [a] = extract_doc(doc)
    assert a.key == ("good", "ADJ", "at") and a.object_class == "event"
    # "I visited the museum ." -> the direct object's class
    doc = make(("I", "PRP", "PRON", "nsubj", 1, "I"), ("visited", "VBD", "VERB", "ROOT", 1, "visit"),
               ("the", "DT", "DET", "det", 3, "the"), ("museum", "NN", "NOUN", "dobj", 1, "museum"),
               (".", ".", "PUNCT", "punct", 1, "."))
    [a] = extract_doc(doc)
    assert a.key == ("visit", "VERB", "-") and a.object_class == "building"
    # a stranded preposition has no object: "other"
    doc = make(("the", "DT", "DET", "det", 1, "the"), ("city", "NN", "NOUN", "ROOT", 1, "city"),
               ("we", "PRP", "PRON", "nsubj", 3, "we"), ("arrived", "VBD", "VERB", "relcl", 1, "arrive"),
               ("in", "IN", "ADP", "prep", 3, "in"))
    [a] = extract_doc(doc)
    assert a.key == ("arrive", "VERB", "in") and a.object_class == "other"


# --- sentence text: titles and paragraphs the parser glued on are left out ----------------------


@pytest.mark.parametrize("text,pattern,expected", [
    ("My first journey\nWhen we arrived to Rome, it was raining.", "arrived to",
     "When we arrived to Rome, it was raining."),  # a title glued to the first sentence
    ("A Journey I Remember\n\nLast year we arrived to Porto.", "arrived to", "Last year we arrived to Porto."),
    ("We were tired of\nthe long winter.", "tired of", "We were tired of\nthe long winter."),  # a wrapped line
    ("I went there in\nAugust because we were tired of it.", "tired of",
     "I went there in\nAugust because we were tired of it."),  # a short wrapped line ending in a function word
])
def test_extract_sentence_leaves_out_a_glued_title(text, pattern, expected):
    from hingeword.extract import sentence_span

    lo = text.index(pattern)
    sentence, start = sentence_span(text, 100, 100 + lo, 100 + lo + len(pattern))
    assert sentence == expected and start == 100 + text.index(expected)
