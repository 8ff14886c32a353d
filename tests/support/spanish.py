"""Invented Spanish calls for the language tests: three call reasons, each with its own
words, said in varied sentences (test data of our own, not a reference)."""

from __future__ import annotations

import random
from pathlib import Path

REASONS = {
    "factura": [
        "la factura de este mes llega muy alta y no entiendo el importe",
        "me han cobrado dos veces el recibo en la cuenta del banco",
        "quiero revisar el importe de la factura porque sube cada mes",
        "el cargo del recibo no coincide con la lectura del contador",
        "necesito una copia de la factura del trimestre pasado",
        "el descuento prometido no aparece en el recibo mensual",
        "la tarifa nocturna sale más cara que la tarifa normal",
        "pagué con tarjeta y el saldo sigue pendiente en la factura",
        "el impuesto de la factura está mal calculado según el contrato",
    ],
    "mudanza": [
        "me mudo a otro piso el mes que viene y quiero dar de baja el suministro",
        "nos cambiamos de casa y hay que pasar el contrato a la nueva dirección",
        "dejo el piso alquilado y necesito cerrar el contrato en esa dirección",
        "la mudanza es el lunes y quiero el alta en la vivienda nueva",
        "vendo la casa y el comprador quiere el contrato a su nombre",
        "el nuevo inquilino entra el viernes y pide las llaves del contador",
        "me traslado a otra ciudad por trabajo y dejo la vivienda",
        "los muebles salen el sábado y quiero la lectura final ese día",
        "el propietario necesita el certificado de baja del suministro",
    ],
    "averia": [
        "se ha cortado la luz en toda la calle desde esta mañana",
        "no tenemos agua caliente y la caldera marca una avería",
        "hay una fuga de agua en la acera delante del portal",
        "el corte de luz dura ya tres horas y nadie avisa",
        "los técnicos de la avería no han venido todavía",
        "saltan los plomos cada vez que enciendo el horno",
        "la presión del grifo es muy baja en toda la finca",
        "huele a gas en la escalera y los vecinos están preocupados",
        "el transformador de la esquina hace ruido y echa chispas",
    ],
}

LEADS = ["pues mire", "a ver", "oiga", "mire usted", "bueno", "es que", "perdone"]
TAILS = [
    "y no sé qué hacer",
    "desde hace unos días",
    "según me dijeron ayer",
    "y llevo toda la semana así",
    "y nadie me da una respuesta",
    "si me puede ayudar",
]

OPENINGS = [
    "buenos días, le atiende el servicio de clientes, dígame",
    "hola, gracias por llamar, en qué puedo ayudarle",
]
CLOSINGS = [
    "muy bien, pues queda anotado, muchas gracias por llamar",
    "de acuerdo, le enviamos la confirmación por correo, que tenga buen día",
]


def spanish_call(rng: random.Random, reason: str) -> str:
    """One call as speaker-labelled text: agent opening, eight customer sentences of the
    reason, agent closing."""
    lines = [f"Agent: {rng.choice(OPENINGS)}"]
    for _ in range(8):
        said = f"{rng.choice(LEADS)}, {rng.choice(REASONS[reason])} {rng.choice(TAILS)}"
        lines.append(f"Customer: {said}")
        lines.append("Agent: vale, entiendo, lo reviso ahora mismo")
    lines.append(f"Agent: {rng.choice(CLOSINGS)}")
    return "\n".join(lines) + "\n"


def write_spanish_calls(folder: Path, n: int, seed: int = 3, prefix: str = "es-") -> list[str]:
    """Write ``n`` calls as ``<prefix>NNNN.txt`` files; return their ids."""
    rng = random.Random(seed)
    folder.mkdir(parents=True, exist_ok=True)
    ids = []
    for i in range(n):
        tid = f"{prefix}{i:04d}"
        (folder / f"{tid}.txt").write_text(spanish_call(rng, rng.choice(list(REASONS))), "utf-8")
        ids.append(tid)
    return ids
