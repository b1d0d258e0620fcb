#!/usr/bin/python3
"""Writes the invented demo scenario under data/demo/ (seeded, reproducible).

Scenario (entirely invented): "Saltmarsh Commons", a community forum and wiki about
the fictional Vesterly archipelago: tides, boats, harbour food, local history. The
corpus is its crawl. Three invented benchmarks were written by a fictional lab:
  tidequiz    short questions with answer choices (JSONL, choices as an array)
  harborread  longer reading passages with a question (JSON array)
  polyglot    short texts in French, German, Spanish and Italian (CSV)
An invented vendor's fine-tuning file (vendor_finetune.jsonl) quotes three quiz
items. A few benchmark items were planted into the crawl, in different ways (verbatim,
case/punctuation changed, partial). data/demo/expected.json lists them, so the
end-to-end test can check that every planted leak is found and the rest is clean.

Usage: scripts/make_demo_data.py [--out data/demo]
"""
import argparse
import csv
import io
import json
import os
import random
import re
import subprocess

SEED = 20261201

ISLANDS = ["Vesterly", "Krannock", "Mirelund", "Oskerby", "Tarrow", "Hollin Skerry",
           "Brackwater", "Peldane", "Sule Minor", "Quillstone", "Dunmarra", "Eskholt"]
HARBOURS = ["Gullhaven", "Port Ammering", "Saltcombe", "Rookley Quay", "Inverlash",
            "Marrowby", "Coldstrand", "Fenwick Slip", "Halloran Steps", "Wyrebay"]
PEOPLE = ["Ilse Marrick", "Tobias Venn", "Agatha Crewe", "Dorran Pike", "Mina Sollis",
          "Cal Hebbert", "Rosalind Awe", "Piet Varga", "Henny Loft", "Oswin Tarr"]
NOUNS = ["tide table", "mooring line", "lobster creel", "ferry timetable", "sea wall",
         "lighthouse lamp", "net loft", "kelp harvest", "smokehouse", "pilot boat",
         "tidal pool", "harbour bell", "salt pan", "fish market", "boat shed",
         "storm surge", "sandbar", "herring run", "chart room", "slipway", "oyster bed",
         "weather vane", "rope walk", "drying green", "customs house", "breakwater"]
ADJS = ["old", "weathered", "busy", "quiet", "flooded", "restored", "narrow", "tarred",
        "northern", "southern", "crooked", "freshly painted", "half sunken", "famous",
        "windswept", "tiny", "stone", "wooden", "seasonal", "lantern-lit"]
VERBS = ["repaired", "photographed", "sketched", "measured", "walked past", "rebuilt",
         "visited", "cleaned", "mapped", "argued about", "painted", "inspected",
         "celebrated", "described", "recorded", "guarded", "tarred", "moved"]
TIMES = ["at dawn", "last spring", "during the equinox tides", "after the winter gales",
         "every Sunday", "in 1887", "before the ferry strike", "on market day",
         "at low water", "during the herring festival", "in the long summer of 1931",
         "when the fog lifted", "on the night of the great surge"]
OPENERS = ["Does anyone remember", "I finally found", "Here is a photo of",
           "Quick question about", "Old postcard showing", "Notes from my visit to",
           "Family story about", "Looking for information on"]
FOOTER = ("Posted on Saltmarsh Commons. Text is shared under the community licence; "
          "please credit the original poster when you copy it elsewhere.")
# The quiz instructions circulate on the forum too: a template, not a leak.
QUIZ_INSTRUCTION = ("Read the question carefully and choose the single best answer from "
                    "the four options listed below it.")


def sentence(rng):
    return (f"{rng.choice(PEOPLE)} {rng.choice(VERBS)} the {rng.choice(ADJS)} "
            f"{rng.choice(NOUNS)} at {rng.choice(HARBOURS)} on {rng.choice(ISLANDS)} "
            f"{rng.choice(TIMES)}.")


def post(rng, n_sentences):
    title = f"{rng.choice(OPENERS)} the {rng.choice(NOUNS)} on {rng.choice(ISLANDS)}"
    body = " ".join(sentence(rng) for _ in range(n_sentences))
    return title, body


def make_quiz(rng):
    items = []
    facts = []
    for i in range(1, 41):
        island, harbour = rng.choice(ISLANDS), rng.choice(HARBOURS)
        noun, person = rng.choice(NOUNS), rng.choice(PEOPLE)
        year = rng.randint(1790, 1990)
        kind = i % 4
        if kind == 0:
            q = (f"In which year did {person} first record the {noun} of {harbour} "
                 f"on the island of {island}, according to the harbour ledger kept "
                 f"by the pilots' guild?")
            choices = [str(year), str(year + 7), str(year - 12), str(year + 23)]
        elif kind == 1:
            q = (f"Which harbour on {island} is known for the {rng.choice(ADJS)} {noun} "
                 f"that fishermen paint blue every spring before the first "
                 f"{rng.choice(['herring', 'mackerel', 'sprat', 'cod'])} boats leave?")
            choices = rng.sample(HARBOURS, 4)
        elif kind == 2:
            q = (f"Who rebuilt the {noun} at {harbour} after the storm of {year}, "
                 f"using timber salvaged from the wreck of the schooner "
                 f"{rng.choice(['Mariel', 'Kittiwake', 'Brenna', 'Old Faithful', 'Ysolde'])}?")
            choices = rng.sample(PEOPLE, 4)
        else:
            q = (f"How many {rng.choice(['bells', 'lamps', 'moorings', 'creels', 'sheds'])} "
                 f"did the {noun} of {harbour} have when the {island} survey of {year} "
                 f"was written up by the parish clerk?")
            base = rng.randint(3, 40)
            choices = [str(base), str(base + 2), str(base * 2), str(base + 9)]
        answer = rng.randrange(4)
        items.append({"id": f"tq-{i:03d}", "instruction": QUIZ_INSTRUCTION,
                      "question": q, "choices": choices, "answer": answer})
        facts.append((island, harbour))
    # Items too short to judge with 13-grams: kept honest in their own bucket.
    items.append({"id": "tq-041", "instruction": "", "question": "Capital of Krannock?",
                  "choices": ["Gullhaven", "Wyrebay"], "answer": 0})
    items.append({"id": "tq-042", "instruction": "", "question": "Is Tarrow tidal?",
                  "choices": ["yes", "no"], "answer": 1})
    return items


# Passages use their own names and phrasing, so that they share no n-gram with the
# forum posts unless one was planted.
P_NAMES = ["Brother Anselm", "the widow Carrow", "young Fenn Abbot", "Captain Ruadh",
           "the surveyor Lisle", "Mother Grayling", "the ferryman Ortolan", "Sister Imelda"]
P_PLACES = ["the chapel of Saint Brannoc", "Kestrel Point", "the salt road to Ardwell",
            "the drowned village of Lowmere", "the signal tower at Hob's Nab",
            "the tithe barn at Sculley", "the causeway to Inish Var", "Ropers' Row"]
P_DEEDS = ["kept a daybook of every ship that passed", "buried the parish silver under a cairn",
           "taught the harbour children to read the stars", "bargained for timber with traders from the south",
           "carried lamp oil across the sands at every spring tide", "wrote down the old songs of the net makers",
           "refused to leave when the sea took the lower fields", "built a wall of turf and shingle against the surge"]
P_OUTCOMES = ["and the habit outlived everyone who remembered why it began",
              "which is why the lane still floods each March", "until a storm scattered the pages over the marsh",
              "and visitors are still shown the place today", "though nobody agrees on the exact year",
              "so that the custom passed to the next generation"]


def make_passages(rng):
    out = []
    for i in range(1, 13):
        sents = []
        for _ in range(rng.randint(6, 9)):
            # A year or a ledger number falls in every 13-token window, so two
            # passages do not share an n-gram by chance.
            sents.append(f"In {rng.randint(1620, 1890)}, {rng.choice(P_NAMES)} of "
                         f"{rng.choice(P_PLACES)} (entry {rng.randint(1, 9999)}) "
                         f"{rng.choice(P_DEEDS)} in {rng.randint(1620, 1890)}, "
                         f"{rng.choice(P_OUTCOMES)}.")
        passage = " ".join(sents)
        question = (f"According to the passage, what did {rng.choice(P_NAMES)} do near "
                    f"{rng.choice(P_PLACES)}?")
        out.append({"id": f"hr-{i:02d}", "passage": passage, "question": question})
    return out


POLYGLOT = [
    ("fr-01", "fr", "Au petit matin, les pêcheurs de Gullhaven réparent leurs filets sur le quai pendant que la marée remonte lentement vers les cabanes peintes en bleu."),
    ("fr-02", "fr", "La vieille boulangerie du port vend encore des galettes au sarrasin que les marins emportent pour les longues traversées vers les îles du nord."),
    ("fr-03", "fr", "Chaque automne, le conseil de l'île organise une fête où l'on compte les bateaux rentrés et l'on allume des lanternes sur la digue de pierre."),
    ("fr-04", "fr", "Élise a noté dans son carnet que le phare de Coldstrand s'était éteint trois fois pendant la tempête d'équinoxe, à chaque fois juste avant minuit."),
    ("fr-05", "fr", "Les enfants apprennent à lire la table des marées à l'école, et ceux qui se trompent doivent ranger les cordages du hangar communal."),
    ("fr-06", "fr", "Le sentier côtier longe les marais salants, où l'on récolte encore le sel à la main pendant les semaines les plus chaudes de l'été."),
    ("de-01", "de", "Im Hafen von Marrowby liegen die Fischkutter dicht nebeneinander, und an windstillen Abenden hört man das Knarren der Taue bis ins Dorf hinauf."),
    ("de-02", "de", "Die große Straße am Deich wurde nach der Sturmflut neu gepflastert, und die Bewohner pflanzten zum Schutz der Dünen Strandhafer entlang der Böschung."),
    ("de-03", "de", "Großmutter Henny erzählte, dass die Fähre früher nur bei Hochwasser anlegen konnte und die Reisenden sonst im Gasthaus am Kai übernachten mussten."),
    ("de-04", "de", "Zwischen den Inseln verkehrt im Winter nur ein einziges Postschiff, dessen Kapitän jeden Brief persönlich an die Empfänger auf dem Steg übergibt."),
    ("de-05", "de", "Das Heimatmuseum zeigt alte Seekarten, auf denen die Sandbänke vor Tarrow mit roter Tinte markiert und mit kleinen Warnungen versehen sind."),
    ("de-06", "de", "Wer im Herbst die Salzwiesen besucht, sieht Tausende von Zugvögeln, die vor ihrer langen Reise nach Süden im flachen Wasser nach Nahrung suchen."),
    ("es-01", "es", "En el puerto de Saltcombe, los pescadores secan el pulpo al sol sobre cuerdas tendidas entre los postes de madera del antiguo muelle."),
    ("es-02", "es", "La señora Agatha guarda en su cocina un cuaderno con las recetas de sopa de mariscos que su abuela aprendió de los marineros del norte."),
    ("es-03", "es", "Cuando baja la marea, los niños corren por la arena buscando cangrejos y conchas entre las rocas cubiertas de algas verdes y brillantes."),
    ("es-04", "es", "El faro de Inverlash fue construido con piedras traídas desde la isla vecina, y su linterna todavía gira gracias a un mecanismo de relojería."),
    ("es-05", "es", "Durante la fiesta del arenque, las familias decoran las barcas con flores de papel y navegan juntas alrededor de la bahía al atardecer."),
    ("es-06", "es", "Los archivos de la parroquia registran cada naufragio desde el siglo dieciocho, con el nombre del barco, la carga perdida y los supervivientes."),
    ("it-01", "it", "Nel porto di Wyrebay le barche dei pescatori rientrano all'alba, e il mercato del pesce si riempie di voci, cassette di ghiaccio e gabbiani curiosi."),
    ("it-02", "it", "La vecchia torre di guardia sopra la scogliera serviva a segnalare le navi in arrivo accendendo un fuoco visibile da tutte le isole vicine."),
    ("it-03", "it", "Ogni estate i ragazzi dell'isola ridipingono lo scafo della barca comunale con i colori della bandiera del porto, bianco, verde e arancione."),
    ("it-04", "it", "Il custode del faro annotava ogni sera la direzione del vento e l'altezza delle onde in un registro che oggi è conservato in biblioteca."),
    ("it-05", "it", "Dopo la mareggiata del novembre scorso, i volontari hanno ricostruito il muretto del sentiero costiero usando le pietre trascinate dal mare."),
    ("it-06", "it", "Le saline abbandonate a sud del villaggio sono diventate un rifugio per gli aironi, che vi nidificano tranquilli lontano dalle barche a motore."),
]


def shout(text):
    """Case and punctuation changed: upper-case, punctuation dropped or swapped."""
    t = text.upper()
    t = re.sub(r"[,.;:?!]", " ", t)
    return re.sub(r"\s+", " ", t).strip()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=os.path.join(os.path.dirname(__file__), "..", "data", "demo"))
    args = ap.parse_args()
    rng = random.Random(SEED)
    out = os.path.abspath(args.out)
    os.makedirs(os.path.join(out, "corpus"), exist_ok=True)
    os.makedirs(os.path.join(out, "benchmarks"), exist_ok=True)

    quiz = make_quiz(rng)
    passages = make_passages(rng)
    by_quiz = {q["id"]: q for q in quiz}
    by_pass = {p["id"]: p for p in passages}
    poly = {pid: text for pid, _, text in POLYGLOT}

    # Planted leaks: (benchmark, item, kind, text placed into a corpus document).
    def quiz_text(q):
        return q["question"] + " " + " / ".join(q["choices"])

    plants = [
        ("tidequiz", "tq-007", "verbatim", quiz_text(by_quiz["tq-007"])),
        ("tidequiz", "tq-013", "case_punct", shout(quiz_text(by_quiz["tq-013"]))),
        ("tidequiz", "tq-022", "partial", by_quiz["tq-022"]["question"]),
        ("tidequiz", "tq-035", "verbatim", quiz_text(by_quiz["tq-035"])),
        ("harborread", "hr-03", "verbatim", by_pass["hr-03"]["passage"]),
        ("harborread", "hr-07", "partial",
         " ".join(by_pass["hr-07"]["passage"].split(". ")[:3]) + "."),
        ("harborread", "hr-10", "case_punct", shout(by_pass["hr-10"]["passage"])),
        ("polyglot", "fr-04", "verbatim", poly["fr-04"]),
        ("polyglot", "de-02", "case_punct", shout(poly["de-02"])),  # STRASSE vs Straße
        ("polyglot", "es-04", "verbatim", poly["es-04"]),
        ("polyglot", "it-05", "partial", " ".join(poly["it-05"].split()[:15])),
    ]

    docs = []
    for i in range(6000):
        title, body = post(rng, rng.randint(3, 9))
        docs.append({"id": f"sc-{i:05d}", "title": title, "text": body + " " + FOOTER,
                     "meta": {"board": rng.choice(["history", "boats", "food", "tides"]),
                              "replies": rng.randint(0, 40)}})
    # The quiz instructions are quoted in a few posts (template, not contamination).
    for k in range(5):
        docs[100 + k * 997]["text"] += " Teachers often say: " + QUIZ_INSTRUCTION
    # Plant each leak inside an ordinary post, at a random place.
    planted_in = {}
    for bench, item, kind, text in plants:
        d = rng.randrange(len(docs))
        while d in planted_in.values():
            d = rng.randrange(len(docs))
        sents = docs[d]["text"].split(". ")
        cut = rng.randint(1, max(1, len(sents) - 1))
        docs[d]["text"] = ". ".join(sents[:cut]) + ". " + text + " " + ". ".join(sents[cut:])
        planted_in[(bench, item)] = d

    # Three corpus files: one plain JSONL, two zstd-compressed.
    parts = [docs[0:2000], docs[2000:4000], docs[4000:6000]]
    names = ["forum-2019.jsonl", "forum-2020.jsonl", "forum-2021.jsonl"]
    for name, part in zip(names, parts):
        path = os.path.join(out, "corpus", name)
        with open(path, "w", encoding="utf-8") as f:
            for d in part:
                f.write(json.dumps(d, ensure_ascii=False) + "\n")
    for name in names[1:]:
        path = os.path.join(out, "corpus", name)
        subprocess.run(["zstd", "-q", "-f", "-19", "--rm", path, "-o", path + ".zst"], check=True)

    with open(os.path.join(out, "benchmarks", "tidequiz.jsonl"), "w", encoding="utf-8") as f:
        for q in quiz:
            f.write(json.dumps(q, ensure_ascii=False) + "\n")
    with open(os.path.join(out, "benchmarks", "harborread.json"), "w", encoding="utf-8") as f:
        json.dump(passages, f, ensure_ascii=False, indent=1)
        f.write("\n")
    with open(os.path.join(out, "benchmarks", "polyglot.csv"), "w", encoding="utf-8", newline="") as f:
        w = csv.writer(f)
        w.writerow(["id", "lang", "text"])
        for row in POLYGLOT:
            w.writerow(row)

    # Invented model results for the impact table: the fictional model does better on
    # the leaked quiz items than on the rest.
    leaked = {item for bench, item, _, _ in plants if bench == "tidequiz"}
    with open(os.path.join(out, "model_results.jsonl"), "w", encoding="utf-8") as f:
        for q in quiz:
            p = 0.95 if q["id"] in leaked else 0.55
            f.write(json.dumps({"id": q["id"], "correct": int(rng.random() < p)}) + "\n")

    # Third-party fine-tuning data from an invented vendor: prompt/response pairs,
    # three of which quote quiz items (to be dropped or redacted by `tidemark clean`).
    vendor_leaks = ["tq-010", "tq-018", "tq-027"]
    vendor = []
    for i in range(400):
        title, body = post(rng, rng.randint(2, 5))
        vendor.append({"uid": f"v-{i:04d}", "prompt": f"Write a short forum reply titled '{title}'.",
                       "response": body, "license": "vendor-demo"})
    for k, item in enumerate(vendor_leaks):
        q = by_quiz[item]
        vendor[50 + 120 * k]["prompt"] = q["question"] + " Options: " + "; ".join(q["choices"])
    with open(os.path.join(out, "vendor_finetune.jsonl"), "w", encoding="utf-8") as f:
        for v in vendor:
            f.write(json.dumps(v, ensure_ascii=False) + "\n")

    expected = {
        "planted": [{"benchmark": b, "id": i, "kind": k,
                     "corpus_doc": docs[planted_in[(b, i)]]["id"]} for b, i, k, _ in plants],
        "too_short": ["tidequiz/tq-041", "tidequiz/tq-042"],
        "vendor_leaks": [{"uid": vendor[50 + 120 * k]["uid"], "item": it}
                         for k, it in enumerate(vendor_leaks)],
        "template_ngram_source": "quiz instruction field, quoted in 5 forum posts",
    }
    with open(os.path.join(out, "expected.json"), "w", encoding="utf-8") as f:
        json.dump(expected, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
