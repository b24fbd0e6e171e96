#!/usr/bin/env python3
# datasets/inbox/generate.py -- the seeded generator of the demo inbox.
#
# EVERYTHING THIS SCRIPT WRITES IS INVENTED.  "Pebblewick Home Gadgets", its
# products (Kettlewisp, Drowsebeam, Fernhub, Mopsy Orbit), its "Porch" app and
# "Porch Plus" plan, every customer name, customer id, e-mail address, URL,
# phone number, order number, invoice number, error code and ticket below is
# made up.  E-mail addresses and URLs use only the RFC 2606 example domains
# (example.com, example.org, example.net); phone numbers use the 555-01xx
# range set aside for fiction.
#
# Files written (into the directory of this script unless --out DIR):
#   labelled.csv     ticket_id, customer, subject, body, queue
#   wrong_labels.csv ticket_id, given_queue, true_queue (labels flipped on purpose)
#   unlabelled.csv   ticket_id, customer, subject, body
#   incoming.csv     ticket_id, customer, subject, body
#
# Deterministic: one random.Random(SEED) drives everything, every choice is
# made from a list (never from dict or set iteration), and files are written
# with newline='' and UTF-8, so running it again rewrites every file byte for
# byte.  CSV follows RFC 4180 (CRLF row ends, fields quoted when they hold a
# comma, quote or line break).  Python 3 standard library only.

import argparse
import csv
import os
import re
import sys

import random

SEED = 20261201

QUEUES = ['billing', 'access', 'delivery', 'fault', 'returns', 'ideas',
          'privacy']
# Tickets per queue in labelled.csv (before the deliberate wrong labels).
LABELLED_COUNTS = [108, 82, 70, 55, 45, 24, 20]
# Rough queue mix of the unlabelled archive and of the incoming batch.
MIX_WEIGHTS = [27, 20, 17, 14, 11, 6, 5]
N_UNLABELLED = 5000
N_INCOMING = 500
N_WRONG = 10
FIRST_TICKET = 100001

# ---------------------------------------------------------------- products
# name variants, parts, actions, feature words: used so each product keeps
# consistent company in the text.
PRODUCTS = [
    {'names': ['Kettlewisp', 'Kettlewisp kettle', 'Kettlewisp 2',
               'kettlewisp', 'smart kettle', 'Kettlewisp Mini'],
     'parts': ['lid', 'base', 'heating plate', 'temperature dial',
               'water gauge', 'limescale filter'],
     'does': ['boil water', 'keep the water warm', 'heat to 80 degrees',
              'start the morning boil', 'reach the set temperature'],
     'wish': ['a tea timer', 'custom temperatures per tea', 'a quieter boil',
              'a keep-warm schedule']},
    {'names': ['Drowsebeam', 'Drowsebeam lamp', 'Drowsebeam sunrise lamp',
               'drowsebeam', 'bedside lamp', 'Drowsebeam Duo'],
     'parts': ['dimmer', 'alarm speaker', 'touch ring', 'power adapter',
               'bulb module', 'night-light'],
     'does': ['dim slowly', 'play the sunrise alarm', 'change colour',
              'wake me up', 'fade out at night'],
     'wish': ['more alarm sounds', 'a sunset mode', 'a nap timer',
              'a warmer light colour']},
    {'names': ['Fernhub', 'Fernhub hub', 'Fernhub home hub', 'fernhub',
               'home hub', 'Fernhub Lite'],
     'parts': ['wifi module', 'status light', 'pairing button',
               'power cable', 'ethernet port', 'antenna'],
     'does': ['connect to the wifi', 'pair with my devices',
              'run the automations', 'stay online', 'find the lamp'],
     'wish': ['support for more devices', 'a guest mode',
              'automations by weather', 'a local-only mode']},
    {'names': ['Mopsy Orbit', 'Mopsy Orbit vacuum', 'Mopsy', 'mopsy orbit',
               'robot vacuum', 'Orbit vacuum'],
     'parts': ['side brush', 'docking station', 'dust bin', 'bumper',
               'main roller', 'cliff sensor'],
     'does': ['find its dock', 'map the kitchen', 'charge',
              'clean the whole floor', 'avoid the stairs'],
     'wish': ['no-go zones', 'a quiet night mode', 'room-by-room schedules',
              'a carpet boost setting']},
]

FIRST_NAMES = ['Ada', 'Bram', 'Cleo', 'Dario', 'Elin', 'Farah', 'Gus', 'Hana',
               'Ivo', 'Jora', 'Kemal', 'Lise', 'Mateo', 'Nell', 'Otto', 'Priya',
               'Quinn', 'Rosa', 'Sven', 'Tamsin', 'Uma', 'Vik', 'Wren', 'Yusuf',
               'Zoë', 'Amélie', 'Björn', 'Chloé', 'José', 'Noémie']
LAST_NAMES = ['Applewhite', 'Brackwood', 'Corrigan', 'Dunmore', 'Ellery',
              'Fennimore', 'Gorseby', 'Hollin', 'Inchbald', 'Jessop',
              'Kettering', 'Larkspur', 'Merriweather', 'Nettlefold', 'Orchard',
              'Pemberton', 'Quarrie', 'Rushby', 'Sallow', 'Thistlewood',
              'Underhay', 'Vance', 'Whitlow', 'Yardley', 'Núñez', 'Lefèvre']
MAIL_DOMAINS = ['example.com', 'example.org', 'example.net',
                'mail.example.com', 'post.example.org']

# ---------------------------------------------------------------- templates
# [a|b|c] picks one alternative; {slot} is filled from the ticket's context.

GREETINGS = ['Hi,', 'Hello,', 'Hello there,', 'Dear support,',
             'Dear Pebblewick team,', 'Hi team,', 'Good morning,', 'Hey,',
             'To whom it may concern,', 'Hi {agent},']
OPENERS = [
    'I bought a {product} [last month|two weeks ago|in the sale|for my '
    'mother|as a gift|a while back].',
    'I have [a|the] {product} and use it with the Porch app.',
    'My order {order} [arrived|was placed] on {date}.',
    'I am writing about my {product} (order {order}).',
    '[We|I] have [been|been a] [happy|long-time|loyal] customer[s|] for '
    '[years|a while|a few months].',
    'This is about the {product} I [ordered|got] on {date}.',
    'My account email is {email}.',
    'I [contacted|wrote to] you [before|last week|yesterday] about this.',
]
CLOSINGS = ['Thanks.', 'Thank you!', 'Thanks in advance.', 'Kind regards,',
            'Best regards,', 'Cheers,', 'Many thanks,', 'Regards,',
            'Thanks for your help.', 'Looking forward to your reply.',
            'Please help.', 'Please sort this out ASAP.', 'Merci!',
            'Thanks so much 🙂', 'Cheers 👍']
VAGUE = [
    'Can someone look at my order {order}?',
    'Please [call|ring] me back on {phone}.',
    'Something is wrong with my account and the {product}.',
    'I need help with my order {order}, see the app.',
    'Not happy with how this has gone so far.',
    'Please check my account {email} and tell me what is going on.',
    'The app shows a message I do not understand about my {product}.',
    'Details are on {url}.',
]
GENERIC_SUBJECTS = ['Help', 'Help please', 'Question', 'Order {order}',
                    'Urgent!!', 'My {product}', 'Problem', 'Re: your email',
                    'Query about my account', 'Still waiting', 'Issue',
                    'Fwd: {product}', 'Please read', 'Support request']

CORE = {
    'billing': [
        'I was charged [twice|two times|double] for order {order}.',
        'My [card|credit card|bank account] was [charged|billed|debited] '
        '{amount} but the [invoice|receipt|bill] says {amount2}.',
        'Why did my Porch Plus [subscription|plan|membership] renew at '
        '{amount} this month?',
        'The [invoice|receipt] {invoice} has the wrong [VAT number|company '
        'name|billing address].',
        'My [payment|card payment|direct debit] [failed|was declined|did not '
        'go through] but the money left my account.',
        'The discount code {promo} was not applied at checkout.',
        'I cancelled Porch Plus but you still [took|charged] {amount}.',
        'Can you send me a [VAT invoice|proper invoice|copy of the invoice] '
        'for {order}?',
        'There is a charge of {amount} on my [statement|bank statement] I do '
        'not recognise.',
        'Please [update|change] the card on my account, the old one '
        '[expired|was cancelled].',
        'The price went up from {amount2} to {amount} without notice.',
        'Please refund the [extra|duplicate|double] charge of {amount}.',
        'I was billed for a {product} I never [ordered|received].',
        'How do I pay by [bank transfer|PayPal-style wallet|instalments]?',
        'The [annual|yearly|monthly] Porch Plus fee was taken [early|twice|after I downgraded].',
        'My [receipt|invoice] shows the [wrong|old] address and my [accountant|employer] needs it fixed.',
        'Your [checkout|payment page] [took|charged] {amount} [for shipping|in fees] that was not shown before.',
    ],
    'access': [
        'I [cannot|can\'t|am unable to] [log in|sign in|login] to the Porch '
        'app.',
        'The password reset email never [arrives|arrived|comes], I checked '
        'spam too.',
        'My account is locked after too many [attempts|tries].',
        'The [two-factor|2FA|verification] code [does not arrive|is '
        'rejected|has expired] every time.',
        'I changed my phone number and now [cannot get|do not get] the '
        '[login|verification] code.',
        'The app keeps logging me out [every few minutes|each morning|after '
        'the update].',
        'It says "[invalid password|account not found|session expired]" even '
        'though the password is right.',
        'I want to change the email on my account from {email} to a new '
        'one.',
        'My [partner|husband|wife|daughter] cannot [join|access] the shared '
        'home in the app.',
        'I forgot my [password|username] and the reset link [is broken|goes '
        'to {url}|does not work].',
        'Someone else may have [logged into|accessed] my account, I got an '
        'alert [from|about] a new device.',
        'After the update the {product} no longer shows because I am logged '
        'out of my account.',
        'Sign-in with my email {email} fails with error {code}.',
        'The [verification|confirmation] email for my new account never came, so I cannot [finish signing up|activate it].',
        'The app [rejects|does not accept] my [password|passcode] since I [reset|changed] it.',
        'I am stuck in a [login loop|sign-in loop]: it asks for the code, then for the password, then the code again.',
    ],
    'delivery': [
        'My parcel [has not arrived|never arrived|is late] and it was due '
        'on {date}.',
        'Tracking for {order} has said "[in transit|out for '
        'delivery|label created]" for [days|a week|ten days].',
        'The courier left the [parcel|box|package] [with a '
        'neighbour|at the wrong address|outside in the rain].',
        'Can I [change|update] the delivery address for order {order}?',
        'The [box|package] arrived [crushed|wet|torn open] but the {product} '
        'seems fine.',
        'When will the {product} be [shipped|dispatched|sent]?',
        'The [tracking link|tracking page] {url} [does not work|shows '
        'nothing].',
        'Only [part of|half of] my order arrived, the {part} is missing.',
        'The [courier|driver] [says|claims] they delivered it but nothing '
        'came.',
        'Do you [deliver|ship] to [Ireland|the islands|Norway|a PO box]?',
        'I paid for [next-day|express|priority] delivery and it took a '
        'week.',
        'The delivery slot was changed [without asking|twice] and I was not '
        'home.',
        '{courier} [says|said] the [address|postcode] is [incomplete|wrong] and [sent|is sending] the parcel back.',
        'The [parcel|package|order] has been [stuck|sitting] at the [depot|sorting centre|local hub] since {date}.',
    ],
    'fault': [
        'The {product} [will not|won\'t|does not] [turn on|power on|start] '
        'any more.',
        'The {product} shows error {code} and [stops|freezes|beeps].',
        'The firmware update [failed|got stuck at {pct}%|bricked it] '
        '[last night|this morning|yesterday].',
        'The {part} [stopped working|is broken|makes a [grinding|clicking|'
        'buzzing] noise].',
        'My {product} keeps [dropping|losing] the wifi connection.',
        'It [no longer|does not] {does} [properly|at all|like before].',
        'The {product} [gets very hot|smells of burning|sparks] near the '
        '{part}.',
        'The {part} light [blinks red|flashes orange|stays off] and nothing '
        'happens.',
        'The app says the {product} is offline [all the time|every night] '
        'although it is on.',
        'I [tried|did] a factory reset [twice|three times] and it still '
        'shows {code}.',
        'Since the update the {product} [restarts|reboots] [randomly|every '
        'hour].',
        'It worked for [a week|two days|a month] and then [died|stopped].',
        'The {part} [came loose|cracked|leaks] after [normal|light|daily] use.',
        'The {product} [does not|will not|won\'t] {does} and the light [blinks|flashes] {code}.',
    ],
    'returns': [
        'I would like to [return|send back] the {product}, it is not what I '
        'expected.',
        'I returned {order} [two weeks ago|on {date}|last month] and the '
        'refund has not [arrived|come through|shown up].',
        'Can you send me a [return label|returns label|prepaid label]?',
        'You sent the wrong [colour|model|item]: I ordered the {product}.',
        'Can I [exchange|swap] the {product} for [a different model|another '
        'colour|the larger one]?',
        'The [return|returns] [page|form] {url} [gives an error|will not '
        'load].',
        'I want my money back for the {product}, it is within the '
        '[30 days|return window|cooling-off period].',
        'The refund was only {amount} instead of {amount2}.',
        'How do I return a [gift|present] without the receipt?',
        'Is the [return|send-back] free or do I pay the postage?',
        'The courier [collected|picked up] the return on {date} but you have '
        'not confirmed it.',
        'I [changed my mind|do not need it] and want to [cancel and '
        'return|send back] the {product}.',
        'The replacement {product} [also|again] [has the same problem|does not suit me], I want a [refund|full refund] this time.',
        'Where do I [drop off|post|take] the [return|parcel] and how long until I get my money back?',
    ],
    'ideas': [
        'It would be [great|lovely|really useful] if the {product} had '
        '{wish}.',
        '[Feature request|Suggestion|Idea]: please add {wish} to the Porch '
        'app.',
        'Could you add [a dark mode|a widget|voice control|an Apple-style '
        'watch app] to the app?',
        'Any plans to make the {product} work with {wish}?',
        'I [love|really like] the {product} but [wish|would love] it could '
        'do {wish}.',
        'Please consider [a family sharing option|exporting the '
        'history|more languages] in a future update.',
        'My [suggestion|idea] would be to let the {product} {does} on a '
        'schedule.',
        'Will you ever [release|make] a {product} with a bigger {part}?',
        'Small [idea|wish]: let me [rename|group|reorder] devices in the '
        'app.',
        'It would [help|be nice] to [share|link] the {product} with [a second phone|my family|guests] without sharing my password.',
        'Please [bring back|keep] the [old|classic] [layout|home screen] as an option, the new one is [confusing|harder to use].',
    ],
    'privacy': [
        'Please [delete|erase|remove] [my account and all my data|all data '
        'you hold about me].',
        'I want a copy of all the personal data you [hold|store|keep] about '
        'me ([subject access request|data access request]).',
        'Does the {product} [record|store|upload] [audio|video|maps of my '
        'home]?',
        'Please [stop|unsubscribe me from] [marketing emails|newsletters|the '
        'promotional emails] to {email}.',
        'Who do you share my [data|personal data|usage data] with?',
        'Under data protection law I ask you to [erase|delete] my '
        'information within [30 days|one month].',
        'Why does the app ask for [my location|access to my contacts|'
        'microphone access]?',
        'I did not consent to [tracking|analytics|cookies] on {url}.',
        'How long do you keep the [history|logs|floor maps] from my '
        '{product}?',
        'Please [correct|update] the personal details you hold, my name is '
        'spelled wrong.',
        'Is the [data|voice data|camera data] from the {product} [sold|passed] to [advertisers|third parties]?',
        'I [withdraw|take back] my consent for [data processing|analytics|personalised ads] on my account {email}.',
    ],
}

SUBJECTS = {
    'billing': ['Charged twice', 'Double charge on order {order}',
                'Wrong invoice', 'Invoice {invoice}', 'Billing question',
                'Porch Plus renewal', 'Payment problem', 'Refund the charge',
                'Unknown charge', 'Price increase?', 'Card update',
                'VAT invoice please'],
    'access': ['Cannot log in', 'Login problem', 'Password reset not working',
               'Account locked', 'Sign in error {code}', '2FA code',
               'Logged out again', 'Change account email',
               'Can\'t access my account', 'Suspicious login alert'],
    'delivery': ['Where is my order?', 'Parcel not arrived',
                 'Tracking stuck', 'Delivery address change',
                 'Late delivery {order}', 'Missing item', 'Damaged box',
                 'Delivery problem', 'When will it ship?',
                 'Courier issue'],
    'fault': ['{product} not working', 'Error {code}', 'Firmware update failed',
              'Broken {part}', 'Wifi keeps dropping', 'Faulty {product}',
              '{product} won\'t turn on', 'Offline in the app',
              'Burning smell!', 'Device keeps rebooting'],
    'returns': ['Return request', 'Refund not received', 'Return label',
                'Wrong item sent', 'Exchange {product}', 'Refund for {order}',
                'Send back', 'Returns form broken', 'Money back please'],
    'ideas': ['Feature request', 'Suggestion', 'Idea for the app',
              'Wish list', 'Would love {wish}', 'Product idea',
              'Feedback and a request'],
    'privacy': ['Delete my data', 'Data access request', 'GDPR request',
                'Unsubscribe', 'Privacy question', 'Personal data',
                'Erase my account', 'What data do you keep?'],
}

# A few tickets in French (queue-specific, short).
FRENCH = {
    'billing': ['Bonjour, j’ai été débité deux fois pour la commande {order}. '
                'Merci de vérifier.'],
    'access': ['Bonjour, je n’arrive plus à me connecter à l’application '
               'Porch, le code de vérification ne marche pas.'],
    'delivery': ['Bonjour, mon colis {order} n’est toujours pas arrivé, le '
                 'suivi ne bouge plus depuis une semaine.'],
    'fault': ['Bonjour, le {product} affiche l’erreur {code} et ne '
              's’allume plus. Que faire ?'],
    'returns': ['Bonjour, je voudrais retourner le {product} et être '
                'remboursé. Où trouver l’étiquette de retour ?'],
    'ideas': ['Bonjour, ce serait génial d’avoir un mode sombre dans '
              'l’application. Merci !'],
    'privacy': ['Bonjour, merci de supprimer mon compte et toutes mes '
                'données personnelles.'],
}

QUOTED_REPLIES = [
    'On {date}, Pebblewick Support <help@example.com> wrote:\n'
    '> Thanks for getting in touch, {first}.\n'
    '> Could you tell us the order number, the "serial" on the base, and\n'
    '> whether the light is red, orange, or green?',
    '-----Original message-----\n'
    'From: "Pebblewick Support" <support@example.net>\n'
    'Subject: Re: ticket {ticket}\n'
    '> We are sorry, truly, for the wait. Your case, number {ticket}, is\n'
    '> with our "second line" team; we will reply within 2 working days.',
    'Your previous reply said:\n'
    '“Please try again later, or visit {url}, and let us know.”\n'
    'I did, twice, and nothing changed.',
]

AGENTS = ['Maren', 'Tobin', 'Ilse', 'Rafe', 'support team']
COURIERS = ['Swiftgull Parcels', 'Otterpost', 'Parcelwing']
PROMOS = ['SPRING15', 'WELCOME10', 'PORCH20', 'BRAMBLE5']


class Ctx:
    """The facts one ticket keeps consistent while it is filled in."""

    def __init__(self, rng, cust, queue):
        self.rng = rng
        self.cust = cust
        self.queue = queue
        self.prod = PRODUCTS[cust['prod']] if rng.random() < 0.8 else \
            rng.choice(PRODUCTS)
        self.order = 'ORD-%06d' % rng.randrange(100000, 999999)

    def slot(self, name):
        r = self.rng
        p = self.prod
        if name == 'product':
            return r.choice(p['names'])
        if name == 'part':
            return r.choice(p['parts'])
        if name == 'does':
            return r.choice(p['does'])
        if name == 'wish':
            return r.choice(p['wish'])
        if name == 'order':
            return self.order if r.random() < 0.85 else \
                'ORD-%06d' % r.randrange(100000, 999999)
        if name == 'invoice':
            return 'INV-2026-%05d' % r.randrange(10000, 99999)
        if name == 'code':
            return r.choice(['E-%d' % r.randrange(100, 999),
                             'ERR 0x%02X' % r.randrange(16, 255),
                             'code %d' % r.randrange(10, 99)])
        if name in ('amount', 'amount2'):
            return r.choice(['£', '€', '$']) + '%d.%02d' % (
                r.randrange(4, 240), r.choice([0, 49, 95, 99]))
        if name == 'date':
            return r.choice(['%d %s' % (r.randrange(1, 29), r.choice(
                ['March', 'April', 'May', 'June', 'July', 'Sept', 'Oct'])),
                'the %dth' % r.randrange(4, 29), 'Monday', 'Friday',
                'last Tuesday'])
        if name == 'email':
            return self.cust['email']
        if name == 'url':
            urls = [
                'https://www.example.com/orders/%s' % self.order,
                'https://help.example.com/returns',
                'https://status.example.net/porch',
                'http://example.org/track?id=%d' % r.randrange(1000, 9999),
                'https://www.example.com/account/reset',
                'https://www.example.com/privacy#cookies',
                'https://community.example.org/ideas']
            # Mostly the page that fits the queue, sometimes any page.
            fit = {'billing': 0, 'access': 4, 'delivery': 3, 'fault': 2,
                   'returns': 1, 'ideas': 6, 'privacy': 5}[self.queue]
            return urls[fit] if r.random() < 0.7 else r.choice(urls)
        if name == 'phone':
            return '555-01%02d' % r.randrange(0, 100)
        if name == 'promo':
            return r.choice(PROMOS)
        if name == 'pct':
            return str(r.randrange(5, 99))
        if name == 'agent':
            return r.choice(AGENTS)
        if name == 'first':
            return self.cust['first']
        if name == 'ticket':
            return str(r.randrange(100001, 110000))
        if name == 'courier':
            return r.choice(COURIERS)
        raise KeyError(name)


ALT_RE = re.compile(r'\[([^\[\]]*)\]')
SLOT_RE = re.compile(r'\{(\w+)\}')


def fill(ctx, template):
    """Resolve [a|b] choices (innermost first), then {slot}s, left to right."""
    s = template
    while True:
        s2 = ALT_RE.sub(lambda m: ctx.rng.choice(m.group(1).split('|')), s,
                        count=1)
        if s2 == s:
            break
        s = s2
    return SLOT_RE.sub(lambda m: ctx.slot(m.group(1)), s)


def typo_word(rng, w):
    if len(w) < 4 or not w.isalpha():
        return w
    i = rng.randrange(1, len(w) - 1)
    k = rng.randrange(3)
    if k == 0:
        return w[:i] + w[i + 1] + w[i] + w[i + 2:]      # swap
    if k == 1:
        return w[:i] + w[i + 1:]                        # drop
    return w[:i] + w[i] + w[i:]                          # double


def add_typos(rng, text, rate):
    out = []
    for w in text.split(' '):
        out.append(typo_word(rng, w) if rng.random() < rate else w)
    return ' '.join(out)


def make_customers(rng, n):
    custs = []
    for i in range(n):
        first = rng.choice(FIRST_NAMES)
        last = rng.choice(LAST_NAMES)
        user = (first[0] + '.' + last).lower()
        user = user.encode('ascii', 'ignore').decode('ascii')
        if rng.random() < 0.4:
            user += str(rng.randrange(1, 99))
        custs.append({'id': 'C%05d' % (20000 + i * 7 + rng.randrange(7)),
                      'first': first, 'last': last,
                      'email': user + '@' + rng.choice(MAIL_DOMAINS),
                      'prod': rng.randrange(len(PRODUCTS)),
                      'style': rng.randrange(4)})
    return custs


def pick_customer(rng, custs):
    # A few customers write often (Zipf-like weights), most write once or twice.
    n = len(custs)
    i = min(int(n * rng.random() ** 1.5), n - 1)
    return custs[i]


def make_ticket(rng, cust, queue):
    """Return (subject, body, ambiguous) for one ticket of queue."""
    ctx = Ctx(rng, cust, queue)
    others = [q for q in QUEUES if q != queue]
    ambiguous = False

    if rng.random() < 0.02:
        body = fill(ctx, rng.choice(FRENCH[queue]))
        subj = fill(ctx, rng.choice(SUBJECTS[queue]))
        return subj, body, False

    length = rng.random()
    core = CORE[queue]
    if length < 0.18:            # one-liner
        parts = [fill(ctx, rng.choice(core))]
    else:
        n_core = 1 if length < 0.7 else 2 if length < 0.92 else 3
        parts = []
        if rng.random() < 0.6:
            parts.append(fill(ctx, rng.choice(GREETINGS)))
        if rng.random() < 0.65:
            parts.append(fill(ctx, rng.choice(OPENERS)))
        for _ in range(n_core):
            parts.append(fill(ctx, rng.choice(core)))
        if rng.random() < 0.3:
            parts.append(fill(ctx, rng.choice(VAGUE)))
    # Topic of a second queue: genuine ambiguity.
    if rng.random() < 0.15:
        ambiguous = True
        other = rng.choice(others)
        s = fill(ctx, rng.choice(CORE[other]))
        if rng.random() < 0.5:
            s = rng.choice(['Also, ', 'And ', 'On top of that, ',
                            'Separately, ', 'Not sure if related but ']) + \
                s[0].lower() + s[1:]
            parts.append(s)
        else:
            parts.insert(max(0, len(parts) - 1), s)
    if length >= 0.18:
        if rng.random() < 0.08:
            parts.append(fill(ctx, rng.choice(QUOTED_REPLIES)))
        if rng.random() < 0.7:
            parts.append(fill(ctx, rng.choice(CLOSINGS)))
        if rng.random() < 0.5:
            sig = cust['first'] + (' ' + cust['last']
                                   if rng.random() < 0.6 else '')
            if rng.random() < 0.25:
                sig += '\n' + cust['email']
            if rng.random() < 0.1:
                sig += '\nTel. ' + ctx.slot('phone')
            parts.append(sig)

    sep = '\n' if cust['style'] == 0 else ' '
    if rng.random() < 0.15:
        sep = '\n\n'
    body = sep.join(parts)
    if rng.random() < 0.15:
        body = add_typos(rng, body, 0.10)
    style = rng.random()
    if style < 0.06:
        body = body.lower()
    elif style < 0.08:
        body = body.upper()
    if rng.random() < 0.05:
        body = body.replace("'", '’')

    if rng.random() < 0.2:
        subj = fill(ctx, rng.choice(GENERIC_SUBJECTS))
    else:
        subj = fill(ctx, rng.choice(SUBJECTS[queue]))
    if rng.random() < 0.04:
        subj = subj.upper()
    elif rng.random() < 0.05:
        subj = subj.lower()
    if rng.random() < 0.05:
        subj = 'Re: ' + subj
    return subj, body, ambiguous


def write_csv(path, header, rows):
    with open(path, 'w', encoding='utf-8', newline='') as f:
        w = csv.writer(f, lineterminator='\r\n')
        w.writerow(header)
        for r in rows:
            w.writerow(r)


def generate(out_dir, seed=SEED):
    rng = random.Random(seed)
    custs = make_customers(rng, 3000)
    next_id = FIRST_TICKET

    # labelled: each queue's tickets, then shuffled into arrival order.
    plan = []
    for q, n in zip(QUEUES, LABELLED_COUNTS):
        plan.extend([q] * n)
    rng.shuffle(plan)
    lab_custs = custs[:260]
    labelled = []
    ambiguous = []
    for q in plan:
        cust = pick_customer(rng, lab_custs)
        subj, body, amb = make_ticket(rng, cust, q)
        labelled.append(['T%d' % next_id, cust['id'], subj, body, q])
        ambiguous.append(amb)
        next_id += 1

    # Deliberate wrong labels, chosen among clear (not ambiguous) tickets.
    clear = [i for i in range(len(labelled)) if not ambiguous[i]]
    wrong_idx = sorted(rng.sample(clear, N_WRONG))
    wrong = []
    for i in wrong_idx:
        true_q = labelled[i][4]
        given = rng.choice([q for q in QUEUES if q != true_q])
        labelled[i][4] = given
        wrong.append([labelled[i][0], given, true_q])

    def unlabelled_rows(n, pool):
        nonlocal next_id
        rows = []
        for _ in range(n):
            q = rng.choices(QUEUES, weights=MIX_WEIGHTS)[0]
            cust = pick_customer(rng, pool)
            subj, body, _ = make_ticket(rng, cust, q)
            rows.append(['T%d' % next_id, cust['id'], subj, body])
            next_id += 1
        return rows

    unlabelled = unlabelled_rows(N_UNLABELLED, custs)
    incoming = unlabelled_rows(N_INCOMING, custs)

    os.makedirs(out_dir, exist_ok=True)
    head = ['ticket_id', 'customer', 'subject', 'body']
    write_csv(os.path.join(out_dir, 'labelled.csv'), head + ['queue'],
              labelled)
    write_csv(os.path.join(out_dir, 'wrong_labels.csv'),
              ['ticket_id', 'given_queue', 'true_queue'], wrong)
    write_csv(os.path.join(out_dir, 'unlabelled.csv'), head, unlabelled)
    write_csv(os.path.join(out_dir, 'incoming.csv'), head, incoming)


def main():
    ap = argparse.ArgumentParser(
        description='Regenerate the invented Pebblewick demo inbox.')
    ap.add_argument('--out', default=os.path.dirname(os.path.abspath(
        __file__)), help='directory to write into (default: beside this '
        'script)')
    ap.add_argument('--seed', type=int, default=SEED)
    a = ap.parse_args()
    generate(a.out, a.seed)
    return 0


if __name__ == '__main__':
    sys.exit(main())
