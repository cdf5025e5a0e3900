"""Filter banks: many band-pass channels designed together.

Centres on a rule (IEC 61260-1 octave and fractional-octave bands, or a typed list) with Q from the
band's width (:mod:`bandsmith.bank.centres`); every channel from one circuit with shared capacitor
values, uniform centre gain and op-amps packed into duals and quads (:mod:`bandsmith.bank.build`,
:mod:`bandsmith.bank.bom`); the bank's response, the ripple of the channels' sum and the isolation
table (:mod:`bandsmith.bank.response`); the ``bank --json`` object and the exports
(:mod:`bandsmith.bank.bank_json`); the session's ``extras["banks"]`` (:mod:`bandsmith.bank.bank_session`).
"""
