"""LoRa and LoRaWAN: frequency plans, regional parameters, modem sensitivity and time on air, per-DR rules,
the link budget and RF-exposure distances."""
