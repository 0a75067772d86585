"""Planted learner preposition errors for ``bench_detection.py``.

:data:`ERRORS` lists twenty typical learner errors with a governor–preposition key
(the key the tool should report), a share of writers who make it (3–12 %, some
rarer than others) and two ways of planting it in one writer's essay:

* **rewriting** a real occurrence of the correct form in the native text
  ("depends on the weather" → "depends of the weather", "listened to the radio" →
  "listened the radio") by a regular expression with a guard against the
  obvious wrong sites (passives, the noun "search", time adjuncts);
* where the essay has no such occurrence, **inserting one short sentence** at a
  sentence boundary. These sentences are INVENTED for this benchmark (they are not
  from any corpus): several templates per error, each with a slot filled from a
  list of different objects, so that inserted sentences vary.

Writers are chosen per error over the whole pool of essays (:func:`assign`), those
whose text has an occurrence to rewrite more often than the others, so that the
share stays at the error's rate. A chosen writer uses the error once (three times
in four) or twice. Every
planted use is recorded (essay, key, how, the sentence after planting) as ground
truth. Planted errors are not real errors: the sentences around them are native,
and a real learner's other mistakes (which confuse the parser) are absent.
"""

from __future__ import annotations

import random
import re
from collections.abc import Callable
from dataclasses import dataclass, field

DET = r"(?:the|a|an|this|these|those|his|her|their|its|my|our|your|some|many|several|every|each|all|both|such|any)"
OBJ = DET[:-1] + r"|it|them|him|me|us|everything)"
BE = frozenset("is was were are be been being am 's 're".split())
NOUN_BEFORE = frozenset("the a an this that his her their its my our your in of within beyond out new global".split())
TIME_AFTER = re.compile(r"\s*(?:\d|(?:the\s+|a\s+)?(?:while|moment|minute|hour|day|week|month|year|time|end|same|"
                        r"last|first|night|morning|evening|noon|dawn|least|all|once|home|times|length|last)\b)",
                        re.IGNORECASE)

#: -ing form → base form, for "capable of doing" → "capable to do".
ING = {
    "being": "be", "doing": "do", "making": "make", "having": "have", "taking": "take", "giving": "give",
    "getting": "get", "producing": "produce", "creating": "create", "handling": "handle", "running": "run",
    "writing": "write", "using": "use", "providing": "provide", "holding": "hold", "carrying": "carry",
    "delivering": "deliver", "generating": "generate", "supporting": "support", "playing": "play",
    "keeping": "keep", "finding": "find", "killing": "kill", "destroying": "destroy", "saving": "save",
    "changing": "change", "leading": "lead", "winning": "win", "surviving": "survive", "achieving": "achieve",
    "building": "build", "acting": "act", "performing": "perform", "telling": "tell", "showing": "show",
    "bringing": "bring", "reaching": "reach", "moving": "move", "seeing": "see", "understanding": "understand",
    "feeling": "feel", "thinking": "think", "carrying out": "carry out", "pulling": "pull", "living": "live",
    "working": "work", "raising": "raise", "meeting": "meet", "loving": "love", "hurting": "hurt",
    "reading": "read", "learning": "learn", "defending": "defend", "protecting": "protect", "causing": "cause",
}


@dataclass(frozen=True)
class Rewrite:
    """A regular expression over a sentence and its replacement (``re`` template or function)."""

    pattern: re.Pattern
    repl: str | Callable
    #: lower-cased words that must not stand right before the match
    not_after: frozenset = frozenset()
    #: the match must not be followed by a time expression
    no_time: bool = False
    #: how many words before the match ``not_after`` looks at
    window: int = 1


@dataclass(frozen=True)
class Error:
    name: str  # as a teacher writes it: "discuss about", "listen + object"
    governor: str  # lemma the tool should report
    pos: str
    prep: str  # "-" for the direct-object slot
    rate: float  # share of writers who make this error
    rewrites: tuple[Rewrite, ...]
    templates: tuple[str, ...]  # invented sentences with a {x} slot
    objects: tuple[str, ...]
    note: str = ""

    @property
    def key(self) -> str:
        return f"{self.governor}|{self.prep}"


def _rw(pattern: str, repl, not_after=(), no_time=False, window=1) -> Rewrite:
    return Rewrite(re.compile(pattern, re.IGNORECASE), repl, frozenset(not_after), no_time, window)


def _capable(m: re.Match) -> str:
    return f"{m.group(1)} to {ING[m.group(2).lower()]}"


ERRORS: tuple[Error, ...] = (
    Error("discuss about", "discuss", "VERB", "about", 0.12,
          (_rw(rf"\b(discuss(?:es|ed|ing)?)\s+(?={OBJ}\b)", r"\1 about ", BE),),
          ("In class we discussed about {x} for almost an hour.", "My friends and I often discuss about {x}.",
           "I would like to discuss about {x} in this part.", "Nobody wanted to discuss about {x} at the meeting.",
           "We should discuss about {x} more openly.", "The article discusses about {x} in detail."),
          ("the ending", "this problem", "the price", "our plans", "the new rules", "the main characters",
           "climate change", "the results", "online shopping", "school uniforms", "public transport", "their decision")),
    Error("depend of", "depend", "VERB", "of", 0.09,
          (_rw(r"\b(depend(?:s|ed|ing)?)\s+on\b", r"\1 of"),),
          ("Everything depends of {x}.", "The final result will depend of {x}.", "Many families depend of {x}.",
           "It really depends of {x}, in my opinion.", "Whether I go or not depends of {x}.",
           "Our success depended of {x}."),
          ("the weather", "the money we have", "your point of view", "the teacher", "the government", "tourism",
           "good luck", "the situation", "their parents", "the price")),
    Error("interested on", "interested", "ADJ", "on", 0.08,
          (_rw(r"\b(interested)\s+in\b", r"\1 on"),),
          ("I have always been interested on {x}.", "Many young people are not interested on {x}.",
           "She became interested on {x} at school.", "Are you interested on {x}?",
           "My brother is very interested on {x}.", "I was never really interested on {x} before."),
          ("history", "politics", "science fiction", "this kind of film", "learning languages", "cooking",
           "football", "photography", "old cars", "the news", "computer games", "modern art")),
    Error("arrive to", "arrive", "VERB", "to", 0.08,
          (_rw(r"\b(arriv(?:e|es|ed|ing))\s+(?:in|at)\b", r"\1 to", no_time=True),),
          ("We arrived to {x} late in the evening.", "When I arrived to {x}, everybody was waiting.",
           "The package finally arrived to {x}.", "They will arrive to {x} tomorrow.",
           "As soon as we arrived to {x}, it started to rain.", "I arrived to {x} just in time."),
          ("the station", "the hotel", "London", "the airport", "school", "the city centre", "the party",
           "my office", "the beach", "Madrid", "the stadium")),
    Error("married with", "married", "ADJ", "with", 0.04,
          (_rw(r"\b(married)\s+to\b", r"\1 with"),),
          ("My cousin is married with {x}.", "She got married with {x} last year.",
           "He has been married with {x} for ten years.", "In the film she is married with {x}.",
           "I would never get married with {x}.", "Her sister was married with {x}."),
          ("a doctor", "an Italian man", "his best friend", "a famous singer", "a teacher", "a man from Canada",
           "someone she met at work", "an engineer", "a lawyer", "my neighbour's son"),
          note="the parser may make 'married' a verb or an adjective: matched on governor + preposition"),
    Error("listen + object", "listen", "VERB", "-", 0.08,
          (_rw(rf"\b(listen(?:s|ed|ing)?)\s+to\s+(?=(?:{DET}|music|songs?|radio|people|him|me|us|them|jazz|rock)\b)",
               r"\1 "),),
          ("Every morning I listen {x} on the bus.", "My parents never listen {x}.",
           "We listened {x} while we were cooking.", "I like to listen {x} when I study.",
           "You should listen {x} more carefully.", "He was listening {x} in his room."),
          ("music", "the radio", "my advice", "old songs", "the news", "jazz", "podcasts", "the teacher",
           "classical music", "their stories")),
    Error("afraid about", "afraid", "ADJ", "about", 0.05,
          (_rw(r"\b(afraid)\s+of\b", r"\1 about"),),
          ("Many people are afraid about {x}.", "I was always afraid about {x} as a child.",
           "She is not afraid about {x}.", "Why are you so afraid about {x}?", "My little brother is afraid about {x}."),
          ("the future", "losing their jobs", "dogs", "the dark", "flying", "the exams", "change",
           "making mistakes", "spiders", "the dentist")),
    Error("afraid from", "afraid", "ADJ", "from", 0.03,
          (_rw(r"\b(afraid)\s+of\b", r"\1 from"),),
          ("Many children are afraid from {x}.", "I was always afraid from {x}.", "She is not afraid from {x}.",
           "Why are you so afraid from {x}?", "My grandmother is afraid from {x}."),
          ("dogs", "the dark", "spiders", "snakes", "the sea", "high places", "thunder", "strangers",
           "the police", "big cities")),
    Error("enter into", "enter", "VERB", "into", 0.05,
          (_rw(r"\b(enter(?:s|ed|ing)?)\s+(?=(?:the|a|an|this|his|her|their|our|my|its)\b)", r"\1 into "),),
          ("We entered into {x} very quietly.", "When he entered into {x}, everybody stopped talking.",
           "You cannot enter into {x} without a ticket.", "She entered into {x} and sat down.",
           "Nobody is allowed to enter into {x} after ten."),
          ("the room", "the classroom", "the building", "the museum", "the shop", "the kitchen", "the stadium",
           "the church", "the library", "the house"),
          note="native writers enter into agreements, so part of the form is native"),
    Error("aware about", "aware", "ADJ", "about", 0.06,
          (_rw(r"\b(aware)\s+of\b", r"\1 about"),),
          ("Most people are not aware about {x}.", "We should be more aware about {x}.",
           "I was not aware about {x} until last week.", "Young people are becoming aware about {x}.",
           "Are the students aware about {x}?"),
          ("the risks", "this problem", "the dangers of smoking", "their rights", "the new law",
           "climate change", "the costs", "the situation", "what happened", "the rules")),
    Error("focus in", "focus", "VERB", "in", 0.05,
          (_rw(r"\b(focus(?:es|ed|ing|sed|sing)?)\s+on\b", r"\1 in"),),
          ("I could not focus in {x}.", "The film focuses in {x}.", "We need to focus in {x} now.",
           "Schools should focus in {x}.", "In this essay I will focus in {x}.", "She decided to focus in {x}."),
          ("my work", "the main problem", "the story", "the good things", "practical skills", "her career",
           "the details", "one topic", "the children", "the future"),
          note="a rewritten noun 'the focus on' becomes the noun key focus + in"),
    Error("contribute in", "contribute", "VERB", "in", 0.06,
          (_rw(rf"\b(contribut(?:e|es|ed|ing))\s+to\s+(?=(?:{DET}\b|\w+ing\b|\w+tion\b|society\b|growth\b))",
               r"\1 in "),),
          ("Everyone can contribute in {x}.", "Tourism contributes in {x}.", "These changes contributed in {x}.",
           "I want to contribute in {x}.", "Young people should contribute in {x}."),
          ("the economy", "society", "the project", "the success of the team", "our community", "the discussion",
           "pollution", "the problem", "the development of the city", "science")),
    Error("wait + object", "wait", "VERB", "-", 0.05,
          (_rw(r"\b(wait(?:s|ed|ing)?)\s+for\s+(?=(?:the|a|an|my|his|her|their|our|your|him|them|me|us|someone)\b)",
               r"\1 ", no_time=True),),
          ("I am still waiting {x}.", "They were waiting {x} outside the station.", "She waited {x} patiently.",
           "Nobody wanted to wait {x}.", "I had to wait {x} at the airport.", "We waited {x} in the rain."),
          ("the bus", "my friend", "the results", "the train", "an answer", "my parents", "the doctor",
           "the next flight", "her call", "the taxi")),
    Error("search + object", "search", "VERB", "-", 0.04,
          (_rw(rf"\b(search(?:es|ed|ing)?)\s+for\s+(?=(?:{DET}|information|answers?|jobs?|work|food|clues)\b)",
               r"\1 ", NOUN_BEFORE, window=2),),
          ("I searched {x} everywhere.", "We spent the afternoon searching {x}.",
           "Many students search {x} on the internet.", "He is searching {x} in the city.",
           "They searched {x} but found nothing."),
          ("a job", "my keys", "information", "a new flat", "a cheap hotel", "the answer", "a good school",
           "a solution", "my phone", "a parking place"),
          note="natives search a place ('search the house'), so the object slot is partly native"),
    Error("consist in", "consist", "VERB", "in", 0.03,
          (_rw(r"\b(consist(?:s|ed|ing)?)\s+of\b", r"\1 in"),),
          ("The test consists in {x}.", "The meal consisted in {x}.", "Our team consists in {x}.",
           "The course consists in {x}.", "The book consists in {x}."),
          ("three parts", "two questions", "five people", "rice and vegetables", "short stories", "ten lessons",
           "several chapters", "many small tasks", "four students", "a long list of rules"),
          note="'consist in' (= lie in) is rare but native"),
    Error("explain about", "explain", "VERB", "about", 0.09,
          (_rw(rf"\b(explain(?:s|ed|ing)?)\s+(?={OBJ}\b)", r"\1 about ", BE),),
          ("The teacher explained about {x}.", "Can you explain about {x}?",
           "In the next paragraph I will explain about {x}.",
           "He tried to explain about {x}, but nobody listened.", "The guide explained about {x} in English.",
           "Let me explain about {x}."),
          ("the history of the town", "the problem", "the rules", "the new system", "his plan", "the situation",
           "the main idea", "the project", "the grammar", "the results")),
    Error("emphasize on", "emphasize", "VERB", "on", 0.05,
          (_rw(r"\b(emphasiz(?:e|es|ed|ing))\s+(?=(?:the|a|an|this|these|his|her|their|its|our|my|your|how|what)\b)",
               r"\1 on ", BE),),
          ("The author emphasizes on {x}.", "I want to emphasize on {x}.", "Our teacher always emphasized on {x}.",
           "The report emphasizes on {x}.", "We should emphasize on {x}."),
          ("the importance of education", "this point", "good manners", "the role of the family", "safety",
           "the main problem", "the positive side", "teamwork", "the need for change", "practice")),
    Error("reach to", "reach", "VERB", "to", 0.07,
          (_rw(r"\b(reach(?:es|ed|ing)?)\s+(?=(?:the|a|an|this|his|her|their|our|my|its|\d|new|agreement|consensus)\b)",
               r"\1 to ", NOUN_BEFORE, window=2),),
          ("We finally reached to {x}.", "It took us two days to reach to {x}.", "The price reached to {x}.",
           "They reached to {x} after a long walk.", "When we reached to {x}, it was dark.",
           "Few people reach to {x}."),
          ("the top of the mountain", "the village", "the city", "an agreement", "the border", "the hotel",
           "a decision", "the final", "the coast", "a high level")),
    Error("good in", "good", "ADJ", "in", 0.06,
          (_rw(r"\b(good)\s+at\b", r"\1 in", no_time=True),),
          ("I am not very good in {x}.", "She is really good in {x}.", "My brother was always good in {x}.",
           "You have to be good in {x} for this job.", "Nobody in my family is good in {x}."),
          ("mathematics", "sports", "languages", "cooking", "drawing", "football", "singing", "computers",
           "chess", "making friends"),
          note="natives write 'good in' too ('good in the role', 'the good in people')"),
    Error("capable to", "capable", "ADJ", "to", 0.04,
          (_rw(r"\b(capable)\s+of\s+(" + "|".join(sorted((k for k in ING if " " not in k), key=len, reverse=True))
               + r")\b", _capable),),
          ("He is capable to {x}.", "I am not capable to {x}.", "Only a few students were capable to {x}.",
           "She was capable to {x} on her own.", "Is the team capable to {x}?"),
          ("do this job", "solve the problem", "run the company", "finish the work", "win the match",
           "pass the exam", "make good decisions", "understand the text", "live alone", "lead the group"),
          note="'to' before a verb is the infinitive marker, which the extractor never counts as a preposition"),
)

KEYS = {e.key: e for e in ERRORS}


@dataclass
class Planted:
    essay_id: str
    writer: str
    key: str
    error: str
    how: str  # "rewrite" or "insert" (insert = an invented sentence)
    sentence: str


@dataclass
class PlantResult:
    sentences: list[str]
    planted: list[Planted] = field(default_factory=list)


def _sites(sentences: list[str], rw: Rewrite) -> list[tuple[int, re.Match]]:
    out = []
    for i, s in enumerate(sentences):
        for m in rw.pattern.finditer(s):
            before = [w.lower().strip("\"'(,") for w in s[:m.start()].split()[-rw.window:]]
            if any(w in rw.not_after for w in before):
                continue
            if rw.no_time and TIME_AFTER.match(s, m.end()):
                continue
            out.append((i, m))
    return out


def _apply(sentence: str, m: re.Match, rw: Rewrite) -> str:
    new = rw.repl(m) if callable(rw.repl) else m.expand(rw.repl)
    return sentence[:m.start()] + new + sentence[m.end():]


def has_site(sentences: list[str], err: Error) -> bool:
    return any(_sites(sentences, rw) for rw in err.rewrites)


def assign(essays: list[list[str]], rng: random.Random) -> list[list[tuple[Error, int]]]:
    """Choose, for every essay (one writer each), the errors it gets and how many uses.

    Each error reaches about ``rate`` of all writers. Essays whose text has a real
    occurrence to rewrite are chosen more often (``min(0.5, 4·rate)``), the others
    less, so that the total stays at ``rate``: a writer who uses the word is the
    likelier one to get its preposition wrong, and rewritten native sentences are
    preferred to invented ones. Uses: one (three times in four) or two.
    """
    n = len(essays)
    out: list[list[tuple[Error, int]]] = [[] for _ in essays]
    for err in ERRORS:
        sites = [has_site(s, err) for s in essays]
        k = sum(sites)
        p_site = min(0.5, 4 * err.rate)
        p_other = max(0.0, (err.rate * n - p_site * k) / max(1, n - k))
        for i in range(n):
            if rng.random() < (p_site if sites[i] else p_other):
                out[i].append((err, 1 if rng.random() < 0.75 else 2))
    return out


def plant(essay_id: str, writer: str, sentences: list[str], choices: list[tuple[Error, int]],
          rng: random.Random) -> PlantResult:
    """Plant ``choices`` (from :func:`assign`) in a copy of ``sentences``: rewrite a real
    occurrence where one is left, else insert an invented sentence."""
    sents = list(sentences)
    result = PlantResult(sents)
    for err, uses in choices:
        for _ in range(uses):
            sites = [(i, m, rw) for rw in err.rewrites for i, m in _sites(sents, rw)]
            if sites:
                i, m, rw = sites[rng.randrange(len(sites))]
                sents[i] = _apply(sents[i], m, rw)
                result.planted.append(Planted(essay_id, writer, err.key, err.name, "rewrite", sents[i]))
            else:
                sentence = rng.choice(err.templates).format(x=rng.choice(err.objects))
                at = rng.randint(1, max(1, len(sents)))  # never before the first sentence
                sents.insert(at, sentence)
                result.planted.append(Planted(essay_id, writer, err.key, err.name, "insert", sentence))
    return result
