"""Invented calls in each supported language, for ``bench/prepare.py --language`` only.

Not shipped data and not a reference: a few dozen sentence templates per language, written
for this bench, with slots filled at random (nouns of four everyday topics, invented
first names, numbers, and now and then a phone number, an IBAN or an id written the way
that country writes them). Calls have about as many turns and characters as the English
demo calls (about 30 turns, 2,500 characters).
"""

from __future__ import annotations

import random
from collections.abc import Iterator

T = dict[str, list[str]]

LANGS: dict[str, T] = {
    "en": {
        "open": [
            "Thanks for calling, my name is {name}, how can I help today?",
            "Good morning, you're through to customer service, {name} speaking.",
        ],
        "close": [
            "Is there anything else I can help with today?",
            "Thanks for your time, goodbye.",
        ],
        "agent": [
            "Can I take the account number, please?",
            "I can see the {noun} on your account here.",
            "Let me check the {noun} and the {noun2} for you.",
            "The {noun} was updated on the {num}th.",
            "I'll raise a request for the {noun} now.",
            "You should get the {noun} within {num} days.",
            "Could you confirm the {noun} you were sent?",
            "I've added a note about the {noun}.",
            "The {noun2} went out last week, so the {noun} follows.",
            "I'm sorry about the {noun}.",
            "We can book an engineer to look at the {noun}.",
            "Your {noun} is {num} pounds this month.",
        ],
        "customer": [
            "Hi, I'm calling about my {noun}.",
            "Um, the {noun} still hasn't arrived.",
            "Yeah, the {noun} was wrong again and the {noun2} too.",
            "It's {phone}, that's my mobile.",
            "I paid the {noun} but the {noun2} says otherwise.",
            "Right, so the number is {num}{num}{num}.",
            "Okay, and when will the {noun} be fixed?",
            "My bank account is {iban}.",
            "I moved house and the {noun} never changed.",
            "The {noun} has been broken for {num} days.",
            "Can you send the {noun} by email instead?",
            "Sure, that's fine, thanks.",
        ],
        "nouns": [
            "bill",
            "meter",
            "refund",
            "payment",
            "tariff",
            "reading",
            "engineer",
            "contract",
            "direct debit",
            "statement",
            "fault",
            "outage",
            "balance",
            "discount",
            "charge",
            "appointment",
            "letter",
            "invoice",
            "credit",
            "deposit",
        ],
        "phone": ["+44 20 7946 0{num3}", "07700 900{num3}"],
    },
    "es": {
        "open": [
            "Gracias por llamar, le atiende {name}, ¿en qué puedo ayudarle?",
            "Buenos días, servicio de atención al cliente, soy {name}.",
        ],
        "close": ["¿Puedo ayudarle en algo más?", "Gracias por su llamada, que tenga buen día."],
        "agent": [
            "¿Me puede dar el número de contrato, por favor?",
            "Veo la {noun} en su cuenta.",
            "Voy a revisar la {noun} y el {noun2}.",
            "La {noun} se actualizó el día {num}.",
            "Abro una incidencia por la {noun} ahora mismo.",
            "Recibirá la {noun} en {num} días.",
            "¿Puede confirmar la {noun} que le enviamos?",
            "He dejado una nota sobre la {noun}.",
            "El {noun2} salió la semana pasada.",
            "Lamento lo de la {noun}.",
            "Podemos enviar un técnico para revisar el {noun2}.",
            "Su {noun} es de {num} euros este mes.",
        ],
        "customer": [
            "Hola, llamo por mi {noun}.",
            "Pues la {noun} todavía no ha llegado.",
            "Sí, la {noun} vino mal otra vez y el {noun2} también.",
            "Mi móvil es el {phone}.",
            "Pagué la {noun} pero el {noun2} dice otra cosa.",
            "Vale, el número es {num}{num}{num}.",
            "¿Y cuándo arreglan la {noun}?",
            "Mi cuenta es {iban}.",
            "Me mudé y la {noun} nunca cambió.",
            "El {noun2} lleva {num} días roto.",
            "Mi DNI es {id}.",
            "Claro, perfecto, gracias.",
        ],
        "nouns": [
            "factura",
            "lectura",
            "devolución",
            "tarifa",
            "domiciliación",
            "avería",
            "reclamación",
            "cuota",
            "penalización",
            "baja",
            "permanencia",
            "bonificación",
            "instalación",
            "portabilidad",
            "cobertura",
            "fibra",
            "router",
            "contador",
            "recibo",
            "cargo",
        ],
        "phone": ["612 34 5{num3}", "+34 91 123 4{num3}", "6123450{num2}"],
    },
    "de": {
        "open": [
            "Danke für Ihren Anruf, mein Name ist {name}, wie kann ich helfen?",
            "Guten Tag, Kundenservice, Sie sprechen mit {name}.",
        ],
        "close": [
            "Kann ich sonst noch etwas für Sie tun?",
            "Vielen Dank für Ihren Anruf, auf Wiederhören.",
        ],
        "agent": [
            "Können Sie mir die Vertragsnummer nennen?",
            "Ich sehe die {noun} in Ihrem Konto.",
            "Ich prüfe die {noun} und den {noun2}.",
            "Die {noun} wurde am {num}. aktualisiert.",
            "Ich lege jetzt einen Auftrag für die {noun} an.",
            "Sie erhalten die {noun} in {num} Tagen.",
            "Können Sie die {noun} bestätigen?",
            "Ich habe eine Notiz zur {noun} hinterlegt.",
            "Der {noun2} ging letzte Woche raus.",
            "Das mit der {noun} tut mir leid.",
            "Wir schicken einen Techniker für den {noun2}.",
            "Ihre {noun} beträgt {num} Euro im Monat.",
        ],
        "customer": [
            "Hallo, ich rufe wegen meiner {noun} an.",
            "Also die {noun} ist immer noch nicht da.",
            "Ja, die {noun} war wieder falsch und der {noun2} auch.",
            "Meine Nummer ist {phone}.",
            "Ich habe die {noun} bezahlt, aber der {noun2} sagt etwas anderes.",
            "Okay, die Nummer ist {num}{num}{num}.",
            "Und wann wird die {noun} repariert?",
            "Meine IBAN ist {iban}.",
            "Ich bin umgezogen und die {noun} wurde nie geändert.",
            "Der {noun2} ist seit {num} Tagen kaputt.",
            "Meine Steuer-ID ist {id}.",
            "Genau, alles klar, danke.",
        ],
        "nouns": [
            "Rechnung",
            "Ablesung",
            "Erstattung",
            "Zahlung",
            "Lastschrift",
            "Störung",
            "Kündigung",
            "Gutschrift",
            "Mahnung",
            "Abbuchung",
            "Vertragslaufzeit",
            "Installation",
            "Leitung",
            "Zählerstand",
            "Nachzahlung",
            "Abschlag",
            "Tarif",
            "Router",
            "Zähler",
            "Anschluss",
        ],
        "phone": ["0171/12345{num2}", "+49 (0)30 1234{num3}", "030 123 45{num3}"],
    },
    "fr": {
        "open": [
            "Merci de votre appel, je m'appelle {name}, que puis-je faire pour vous ?",
            "Bonjour, service client, {name} à l'appareil.",
        ],
        "close": ["Puis-je vous aider pour autre chose ?", "Merci de votre appel, bonne journée."],
        "agent": [
            "Pouvez-vous me donner votre numéro de contrat ?",
            "Je vois la {noun} sur votre compte.",
            "Je vérifie la {noun} et le {noun2}.",
            "La {noun} a été mise à jour le {num}.",
            "J'ouvre une demande pour la {noun}.",
            "Vous recevrez la {noun} sous {num} jours.",
            "Pouvez-vous confirmer la {noun} reçue ?",
            "J'ai ajouté une note sur la {noun}.",
            "Le {noun2} est parti la semaine dernière.",
            "Je suis désolé pour la {noun}.",
            "Nous pouvons envoyer un technicien pour le {noun2}.",
            "Votre {noun} est de {num} euros ce mois-ci.",
        ],
        "customer": [
            "Bonjour, j'appelle pour ma {noun}.",
            "Euh, la {noun} n'est toujours pas arrivée.",
            "Oui, la {noun} était encore fausse et le {noun2} aussi.",
            "Mon portable, c'est le {phone}.",
            "J'ai payé la {noun} mais le {noun2} dit autre chose.",
            "Bon, le numéro est {num}{num}{num}.",
            "Et quand est-ce que la {noun} sera réparée ?",
            "Mon IBAN est {iban}.",
            "J'ai déménagé et la {noun} n'a jamais changé.",
            "Le {noun2} est en panne depuis {num} jours.",
            "Mon numéro de sécurité sociale est {id}.",
            "D'accord, parfait, merci.",
        ],
        "nouns": [
            "facture",
            "relève",
            "remboursement",
            "mensualité",
            "résiliation",
            "panne",
            "réclamation",
            "échéance",
            "pénalité",
            "souscription",
            "installation",
            "ligne",
            "coupure",
            "consommation",
            "régularisation",
            "offre",
            "box",
            "compteur",
            "prélèvement",
            "abonnement",
        ],
        "phone": ["06.12.34.5{num1}.{num2}", "+33 (0)1 23 45 6{num1} {num2}", "06 12 34 56 {num2}"],
    },
    "it": {
        "open": [
            "Grazie per aver chiamato, sono {name}, come posso aiutarla?",
            "Buongiorno, servizio clienti, parla {name}.",
        ],
        "close": ["Posso aiutarla in altro?", "Grazie per la chiamata, buona giornata."],
        "agent": [
            "Mi può dare il numero di contratto, per favore?",
            "Vedo la {noun} sul suo conto.",
            "Controllo la {noun} e il {noun2}.",
            "La {noun} è stata aggiornata il {num}.",
            "Apro una segnalazione per la {noun}.",
            "Riceverà la {noun} entro {num} giorni.",
            "Può confermare la {noun} ricevuta?",
            "Ho aggiunto una nota sulla {noun}.",
            "Il {noun2} è partito la settimana scorsa.",
            "Mi dispiace per la {noun}.",
            "Possiamo mandare un tecnico per il {noun2}.",
            "La sua {noun} è di {num} euro questo mese.",
        ],
        "customer": [
            "Salve, chiamo per la mia {noun}.",
            "Allora, la {noun} non è ancora arrivata.",
            "Sì, la {noun} era di nuovo sbagliata e anche il {noun2}.",
            "Il mio cellulare è {phone}.",
            "Ho pagato la {noun} ma il {noun2} dice altro.",
            "Ok, il numero è {num}{num}{num}.",
            "E quando sistemate la {noun}?",
            "Il mio IBAN è {iban}.",
            "Ho cambiato casa e la {noun} non è mai cambiata.",
            "Il {noun2} è guasto da {num} giorni.",
            "Il mio codice fiscale è {id}.",
            "Certo, perfetto, grazie.",
        ],
        "nouns": [
            "bolletta",
            "lettura",
            "rimborso",
            "rata",
            "disdetta",
            "fattura",
            "segnalazione",
            "scadenza",
            "penale",
            "attivazione",
            "installazione",
            "linea",
            "interruzione",
            "offerta",
            "domiciliazione",
            "tariffa",
            "modem",
            "contatore",
            "addebito",
            "fornitura",
        ],
        "phone": ["333 123 4{num3}", "+39 06 1234 5{num3}", "06/12345{num2}"],
    },
    "nl": {
        "open": [
            "Bedankt voor het bellen, u spreekt met {name}, waarmee kan ik helpen?",
            "Goedemorgen, klantenservice, met {name}.",
        ],
        "close": [
            "Kan ik u verder nog ergens mee helpen?",
            "Bedankt voor uw telefoontje, fijne dag.",
        ],
        "agent": [
            "Mag ik uw klantnummer, alstublieft?",
            "Ik zie de {noun} op uw rekening.",
            "Ik controleer de {noun} en de {noun2}.",
            "De {noun} is op de {num}e bijgewerkt.",
            "Ik maak nu een melding voor de {noun}.",
            "U krijgt de {noun} binnen {num} dagen.",
            "Kunt u de {noun} bevestigen?",
            "Ik heb een notitie over de {noun} gemaakt.",
            "De {noun2} is vorige week verstuurd.",
            "Het spijt me van de {noun}.",
            "We kunnen een monteur sturen voor de {noun2}.",
            "Uw {noun} is {num} euro per maand.",
        ],
        "customer": [
            "Hallo, ik bel over mijn {noun}.",
            "Nou, de {noun} is nog steeds niet binnen.",
            "Ja, de {noun} klopte weer niet en de {noun2} ook niet.",
            "Mijn nummer is {phone}.",
            "Ik heb de {noun} betaald maar de {noun2} zegt iets anders.",
            "Oké, het nummer is {num}{num}{num}.",
            "En wanneer wordt de {noun} gerepareerd?",
            "Mijn IBAN is {iban}.",
            "Ik ben verhuisd en de {noun} is nooit aangepast.",
            "De {noun2} is al {num} dagen kapot.",
            "Mijn BSN is {id}.",
            "Prima, dank u wel.",
        ],
        "nouns": [
            "factuur",
            "meterstand",
            "terugbetaling",
            "betaling",
            "opzegging",
            "storing",
            "klacht",
            "termijn",
            "boete",
            "aanmelding",
            "installatie",
            "aansluiting",
            "onderbreking",
            "aanbieding",
            "incasso",
            "tarief",
            "modem",
            "meter",
            "afschrijving",
            "levering",
        ],
        "phone": ["06-1234 5{num3}", "+31 (0)20 123 4{num3}", "020-12345{num2}"],
    },
    "pt": {
        "open": [
            "Obrigado por ligar, fala {name}, em que posso ajudar?",
            "Bom dia, apoio ao cliente, o meu nome é {name}.",
        ],
        "close": ["Posso ajudar em mais alguma coisa?", "Obrigado pela sua chamada, bom dia."],
        "agent": [
            "Pode dar-me o número de contrato, por favor?",
            "Vejo a {noun} na sua conta.",
            "Vou verificar a {noun} e o {noun2}.",
            "A {noun} foi atualizada no dia {num}.",
            "Vou abrir um pedido para a {noun}.",
            "Vai receber a {noun} dentro de {num} dias.",
            "Pode confirmar a {noun} que recebeu?",
            "Deixei uma nota sobre a {noun}.",
            "O {noun2} saiu na semana passada.",
            "Lamento a situação da {noun}.",
            "Podemos enviar um técnico para ver o {noun2}.",
            "A sua {noun} é de {num} euros este mês.",
        ],
        "customer": [
            "Olá, estou a ligar por causa da minha {noun}.",
            "Pois, a {noun} ainda não chegou.",
            "Sim, a {noun} veio errada outra vez e o {noun2} também.",
            "O meu telemóvel é {phone}.",
            "Paguei a {noun} mas o {noun2} diz outra coisa.",
            "Ok, o número é {num}{num}{num}.",
            "E quando é que arranjam a {noun}?",
            "O meu IBAN é {iban}.",
            "Mudei de casa e a {noun} nunca mudou.",
            "O {noun2} está avariado há {num} dias.",
            "O meu NIF é {id}.",
            "Claro, perfeito, obrigado.",
        ],
        "nouns": [
            "fatura",
            "leitura",
            "reembolso",
            "prestação",
            "rescisão",
            "avaria",
            "reclamação",
            "mensalidade",
            "penalização",
            "adesão",
            "instalação",
            "linha",
            "interrupção",
            "oferta",
            "débito",
            "tarifa",
            "router",
            "contador",
            "cobrança",
            "fidelização",
        ],
        "phone": ["912 345 6{num2}", "+351 21 123 4{num3}", "9123456{num2}"],
    },
}

NAMES = ["Arlo", "Brisa", "Caelan", "Dorian", "Elowen", "Farah", "Ilsa", "Joren", "Kaia", "Lior"]
_IBAN_COUNTRY = {"en": "GB", "es": "ES", "de": "DE", "fr": "FR", "it": "IT", "nl": "NL", "pt": "PT"}
_IBAN_BBAN = {"GB": 18, "ES": 20, "DE": 18, "FR": 23, "IT": 23, "NL": 14, "PT": 21}


def _iban(rng: random.Random, lang: str) -> str:
    cc = _IBAN_COUNTRY[lang]
    bban = "".join(rng.choice("0123456789") for _ in range(_IBAN_BBAN[cc]))
    check = 98 - int("".join(str(int(c, 36)) for c in bban + cc + "00")) % 97
    s = f"{cc}{check:02d}{bban}"
    return " ".join(s[i : i + 4] for i in range(0, len(s), 4))


def _id(rng: random.Random, lang: str) -> str:
    digits = "".join(rng.choice("0123456789") for _ in range(8))
    if lang == "es":
        return digits + "TRWAGMYFPDXBNJZSQVHLCKE"[int(digits) % 23]
    if lang == "it":
        return "RSSMRA85T10A562S"
    return "1" + digits  # right shape, checks left to chance (an order number most times)


def iter_calls(
    n: int, lang: str, seed: int = 7
) -> Iterator[tuple[str, list[tuple[str, str, str]]]]:
    """``n`` invented calls in ``lang``: ``(call id, [(role, speaker, text), ...])``."""
    spec = LANGS[lang]
    rng = random.Random(seed)
    nouns = spec["nouns"]
    for i in range(n):
        topic = rng.sample(nouns, 3)

        def fill(template: str, topic: list[str] = topic) -> str:
            return template.format(
                name=rng.choice(NAMES),
                noun=rng.choice(topic),
                noun2=rng.choice(topic),
                num=rng.randint(2, 28),
                phone=rng.choice(spec["phone"]).format(
                    num1=rng.randint(0, 9), num2=rng.randint(10, 99), num3=rng.randint(100, 999)
                ),
                iban=_iban(rng, lang),
                id=_id(rng, lang),
            )

        said: set[str] = set()

        def customer(said: set[str] = said) -> str:
            # each kind of personal data at most once a call, as in the demo calls
            while True:
                template = rng.choice(spec["customer"])
                slots = {s for s in ("{phone}", "{iban}", "{id}") if s in template}
                if not slots & said:
                    said.update(slots)
                    return fill(template)

        turns = [("agent", "Agent", fill(rng.choice(spec["open"])))]
        for _ in range(rng.randint(12, 16)):
            turns.append(("customer", "Customer", customer() + " " + customer()))
            turns.append(
                (
                    "agent",
                    "Agent",
                    fill(rng.choice(spec["agent"])) + " " + fill(rng.choice(spec["agent"])),
                )
            )
        turns.append(("agent", "Agent", fill(rng.choice(spec["close"]))))
        yield f"{lang}-{i:06d}", turns
