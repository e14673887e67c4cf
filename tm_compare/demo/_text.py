"""Word banks and sentence templates of the invented Quillhaven demo.

Everything here is made up: the coastal city of Quillhaven, its
neighbourhoods, clubs, outlets and readers do not exist. Each theme has its
own banks (``thing``, ``who``) and templates; placeholders name a bank, and a
trailing digit (``{thing2}``) asks for a second, independent draw from the
same bank. ``GENERIC`` templates are shared by every theme and filled from
that theme's banks, so themes share everyday news wording ("said",
"residents") as real topics do.
"""

from __future__ import annotations

import functools
import math
import re
from types import SimpleNamespace

import numpy as np

# --- banks shared by every theme --------------------------------------------------------------
COMMON_BANKS = {
    "place": (
        "Lantern Row",
        "Saltmarsh",
        "Gullwharf",
        "the Old Ropewalk",
        "Ferrygate",
        "Tidemill",
        "Kestrel Hill",
        "Netmakers' Quay",
        "Brinefield",
        "the Esplanade",
        "Cobble Steps",
        "North Pier",
    ),
    # neighbourhoods that can name a school or a rowing crew
    "area": ("Saltmarsh", "Gullwharf", "Ferrygate", "Tidemill", "Kestrel Hill", "Brinefield"),
    "day": ("Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"),
    "month": ("March", "April", "May", "June", "July", "September"),
    "role": (
        "a council spokesperson",
        "one long-time resident",
        "a shop owner on the Esplanade",
        "a ward councillor",
        "the deputy mayor",
        "a community organiser",
        "a retired fisherman",
        "the chair of the neighbourhood association",
        "an opposition councillor",
        "a local business owner",
    ),
    "few": ("two", "three", "four", "five", "six"),
    "n": ("12", "18", "25", "40", "60", "85", "120"),
    "bign": ("900", "1,200", "2,400", "3,000", "4,750"),
    "pct": ("4", "7", "9", "12", "15", "22", "30"),
    "amount": ("260,000", "840,000", "1.2 million", "3.5 million", "12 million"),
}

GENERIC = (
    "{role} said {thing} had been the talk of {place} for weeks.",
    '"We need clear answers about {thing}," {role} said.',
    "{who} are expected to meet again on {day} to discuss {thing}.",
    "{who} will set out their views at a public meeting in {place} on {day}.",
    "Talk of {thing} dominated the {day} phone-in on the city's community radio station.",
    "{role} said many people in {place} were still worried about {thing}.",
)

# --- themes: banks, sentence templates, headline templates, signature words -------------------
THEMES = {
    "harbour barrier": {
        "thing": (
            "the lock gates",
            "the pumping station",
            "the tidal lagoon",
            "the tidal barrier",
            "the barrier scheme",
            "the floodgates",
            "the harbour redevelopment",
            "the new sluice gates",
            "the estuary defences",
            "the marina plan",
            "the caisson works",
            "the dredging contract",
            "the quayside consultation",
            "the barrier's second phase",
            "the harbour wall",
        ),
        "who": (
            "port pilots",
            "conservation volunteers",
            "harbour engineers",
            "the barrier board",
            "quayside traders",
            "fishing crews",
            "the harbour authority",
            "marina developers",
            "estuary campaigners",
            "the redevelopment panel",
        ),
        "sentences": (
            "Geologists drilled test bores along the harbour mouth to check whether the seabed can carry the barrier's weight.",
            "{who} said a public vote on {thing} should be held before any more contracts are signed.",
            "The barrier's steel gates would swing shut across the estuary on roughly {few} days a year, engineers estimate.",
            "Birdwatchers fear the mudflats near {place} will silt up once the tidal flow is slowed.",
            "A scale model of {thing} has gone on display in the foyer of the harbour office.",
            "{who} said {thing} would protect {place} from storm surges for decades.",
            "Work on {thing} near {place} has fallen {few} weeks behind schedule, according to {who}.",
            "{who} told a packed meeting at Harbour Hall on {day} that {thing} would cost {amount} more than first estimated.",
            "Opponents argue that {thing} will cut {place} off from the open water and harm the estuary's mudflats.",
            "The floodgates are designed to close when the tide rises more than {few} metres above the usual mark.",
            "{who} want the consultation on {thing} extended until {month}.",
            "Engineers plan to sink concrete caissons into the harbour mouth once dredging near {place} is complete.",
            "Supporters of {thing} say the tidal defences will unlock new berths, a marina and waterfront homes.",
            "A survey by {who} found that {pct} per cent of quayside businesses backed {thing}.",
            "The harbour authority insists {thing} will leave shipping lanes open while {thing2} goes ahead.",
        ),
        "titles": (
            "Barrier costs rise again as {who} demand answers",
            "{place} traders split over tidal barrier",
            "Harbour redevelopment: what the floodgates mean for {place}",
            "Delay to {thing} angers estuary campaigners",
            "Council backs next phase of harbour barrier",
        ),
        "section": "harbour",
        "words": (
            "barrier",
            "tidal",
            "floodgates",
            "estuary",
            "caissons",
            "dredging",
            "sluice",
            "quayside",
            "marina",
            "redevelopment",
        ),
    },
    "housing": {
        "thing": (
            "the lease reforms",
            "the deposit scheme",
            "the bedsit conversions",
            "rent controls",
            "the rent cap",
            "affordable flats",
            "the housing waiting list",
            "short-term lets",
            "tenancy deposits",
            "the new lettings register",
            "council housing",
            "the empty homes levy",
            "rent rises",
            "eviction notices",
            "shared-ownership homes",
        ),
        "who": (
            "student renters",
            "the letting agents' association",
            "tenants' unions",
            "landlords",
            "letting agents",
            "housing associations",
            "young renters",
            "the housing committee",
            "private landlords",
            "tenant advocates",
        ),
        "sentences": (
            "Letting agents in {place} reported {n} applications for a single one-bedroom flat last month.",
            "{who} want a register of landlords so that tenants can check repair records before signing a lease.",
            "Rising rents have pushed many first-time buyers out of the city and into villages along the coast.",
            "Several tenants in {place} said they had been asked to pay six months' rent in advance.",
            "The council has bought {few} empty buildings near {place} to convert into affordable flats.",
            "Average rents in {place} have risen {pct} per cent in a year, {who} said.",
            "{who} argue that {thing} would drive small landlords out of the market.",
            "Tenants described mould, damp and repair requests ignored for months at flats near {place}.",
            "The housing committee will vote on {thing} on {day}, with {who} expected to lobby members.",
            "More than {bign} households are on the waiting list for council housing in Quillhaven.",
            "{who} said {thing} had pushed families out of {place} and into towns along the coast.",
            "A two-bedroom flat in {place} now costs more than half of a typical take-home wage in rent.",
            "Landlords would have to register every tenancy under the proposals, with fines from {month}.",
            "{who} collected signatures on {day} calling for {thing} to cover shared houses and bedsits.",
            "Eviction cases reaching the tenancy tribunal rose by {pct} per cent, {who} said.",
        ),
        "titles": (
            "Rents climb again in {place} as {who} call for a cap",
            "Council weighs rent controls after tenant protest",
            "Waiting list for homes passes new record",
            "{who} warn over {thing}",
            "Inside the damp flats of {place}",
        ),
        "section": "housing",
        "words": (
            "rent",
            "rents",
            "tenants",
            "landlords",
            "tenancy",
            "eviction",
            "flats",
            "housing",
            "letting",
            "renters",
        ),
    },
    "transit": {
        "thing": (
            "the tram timetable",
            "the bus lanes",
            "the station interchange",
            "the tram line",
            "the tram extension",
            "the new tram stops",
            "the bus timetable",
            "fare increases",
            "the tram depot",
            "the overhead wires",
            "the proposed route",
            "the park-and-ride scheme",
            "the night buses",
            "the signalling upgrade",
            "track-laying works",
        ),
        "who": (
            "taxi drivers",
            "rail passengers",
            "commuters",
            "the transport committee",
            "tram engineers",
            "bus drivers",
            "cycling groups",
            "the transit authority",
            "shopkeepers along the route",
            "disability campaigners",
        ),
        "sentences": (
            "Trial runs of the first tram carriages are due to begin at the depot in {month}.",
            "{who} asked for cycle lanes to be kept open alongside the tram tracks through {place}.",
            "The transit authority said the new timetable would add {few} buses an hour at peak times.",
            "Shopkeepers on the route through {place} say the roadworks have cut their takings by a third.",
            "Overhead wires for the tram line will be strung between poles along the Esplanade from {month}.",
            "The tram line would run from {place} to the railway station, with a stop every {few} hundred metres.",
            "{who} said {thing} would cut journey times across the city by up to {n} minutes.",
            "Roadworks for {thing} will close lanes near {place} from {day} for {few} weeks.",
            "{who} complained that buses to {place} were late on most mornings last month.",
            "Fares on trams and buses are set to rise by {pct} per cent in {month}, {who} confirmed.",
            "Laying track through {place} means moving water pipes and cables, the transit authority said.",
            "{who} want {thing} to include step-free boarding at every stop.",
            "A ticket covering trams, buses and the harbour ferry is being trialled, {who} said.",
            "Passenger numbers on the route through {place} fell {pct} per cent while {thing} was out of service.",
        ),
        "titles": (
            "Tram line route through {place} confirmed",
            "{who} fear disruption from tram works",
            "Fares to rise as transit budget tightens",
            "Will the tram reach {place}?",
            "Delays hit {thing}",
        ),
        "section": "transport",
        "words": (
            "tram",
            "trams",
            "buses",
            "fares",
            "route",
            "commuters",
            "stops",
            "track",
            "passenger",
            "transit",
        ),
    },
    "schools": {
        "thing": (
            "the homework policy",
            "the uniform rules",
            "the sixth-form college plan",
            "the school lunch scheme",
            "the new curriculum",
            "exam results",
            "the school merger",
            "class sizes",
            "the catchment boundaries",
            "the playground rebuild",
            "after-school clubs",
            "teacher vacancies",
            "the reading programme",
            "school transport",
            "the enrolment deadline",
        ),
        "who": (
            "the teaching unions",
            "the pupils' council",
            "parents",
            "headteachers",
            "school governors",
            "teachers' representatives",
            "the education committee",
            "pupils",
            "parent-teacher groups",
            "school inspectors",
        ),
        "sentences": (
            "Teachers at {area} Primary are running extra reading lessons before the summer exams.",
            "{who} said pupils in temporary classrooms had gone without heating for {few} weeks.",
            "School inspectors rated teaching at {area} Academy as good, with strong results in maths and science.",
            "The new curriculum adds lessons on the coast, the harbour and the city's fishing history.",
            "Parents in {place} queued outside the school gates to appeal against catchment decisions.",
            "{who} at {area} Primary said {thing} had been raised at every meeting this term.",
            "Pupils in {place} scored {pct} points above the city average in reading tests this year.",
            "The education committee is consulting {who} on {thing} until {month}.",
            "{who} warned that {thing} would leave classrooms short of staff by September.",
            "Headteachers said {few} schools in the city still teach in temporary classrooms.",
            "Enrolment at {area} Academy has grown by {n} pupils since the catchment boundaries moved.",
            "{who} praised teachers at {place} for their work on {thing}.",
            "Free school lunches for every pupil under eleven will cost the city {amount} a year.",
            "Governors at {area} Academy will decide on {thing} on {day} after a ballot of parents.",
        ),
        "titles": (
            "Parents protest plan to merge {area} schools",
            "{who} raise alarm over {thing}",
            "Exam results: {area} Academy climbs city table",
            "Teacher shortage bites as term begins",
            "School lunch scheme to reach every pupil",
        ),
        "section": "education",
        "words": (
            "pupils",
            "school",
            "teachers",
            "headteachers",
            "classrooms",
            "curriculum",
            "governors",
            "parents",
            "enrolment",
            "academy",
        ),
    },
    "local sport": {
        "thing": (
            "the penalty shoot-out",
            "the away fixture",
            "the summer tournament",
            "the league title",
            "the cup run",
            "the harbour regatta",
            "the new stadium stand",
            "the youth academy",
            "the derby",
            "the relegation fight",
            "the rowing season",
            "the transfer window",
            "the coastal half-marathon",
            "the promotion race",
            "the clubhouse appeal",
        ),
        "who": (
            "the youth coaches",
            "Kestrel Hill Cricket Club",
            "the Gulls' manager",
            "supporters",
            "the club captain",
            "Saltmarsh Rovers",
            "Tidemill Athletic",
            "rowers from Ferrygate",
            "the coaching staff",
            "season-ticket holders",
        ),
        "score": ("2-1", "3-0", "1-0", "4-2", "2-2", "3-1"),
        "crowd": ("3,150", "4,200", "5,900", "6,800", "7,400"),
        "sentences": (
            "The Gulls' goalkeeper saved a penalty in the final minute to secure a draw at {place}.",
            "{who} confirmed the striker had signed a new two-year contract with the club.",
            "Rowers from {place} trained at dawn on the harbour ahead of the regatta heats.",
            "Saltmarsh Rovers' manager blamed the referee after his side conceded {few} goals in the second half.",
            "The club's youth teams play their home matches on the pitches at {place}.",
            "Quillhaven Gulls beat Tidemill Athletic {score} in front of a crowd of {crowd} on {day}.",
            "{who} said the squad's focus was on {thing} after a difficult run of away fixtures.",
            "The striker's late goal kept the Gulls {few} points clear at the top of the league.",
            "Crews from {area} dominated the harbour regatta, winning {few} of the eight races.",
            "{who} hope {thing} will bring more young players through from the junior sides.",
            "Tickets for the derby against Saltmarsh Rovers sold out within {n} hours.",
            "The coach praised the defence but admitted the team must score more goals away from home.",
            "{who} raised {amount} for {thing} through a supporters' share scheme.",
            "Injuries to {few} first-team players have stretched the squad ahead of {thing}.",
        ),
        "titles": (
            "Gulls edge closer to the league title",
            "Late goal settles the derby",
            "{area} crews sweep the regatta",
            "{who} look ahead to {thing}",
            "Stadium stand plan wins supporters' backing",
        ),
        "section": "sport",
        "words": (
            "gulls",
            "league",
            "squad",
            "goal",
            "derby",
            "regatta",
            "supporters",
            "players",
            "coach",
            "stadium",
        ),
    },
    "crime and courts": {
        "thing": (
            "the car theft inquiry",
            "the harbour smuggling case",
            "the retrial",
            "the burglary case",
            "the harbour theft trial",
            "the assault charge",
            "the fraud inquiry",
            "the shoplifting cases",
            "the drink-driving case",
            "the vandalism spree",
            "the arson investigation",
            "the bail hearing",
            "the sentencing",
            "the appeal",
            "the stolen boats inquiry",
        ),
        "who": (
            "the court clerk",
            "the defendant's family",
            "magistrates",
            "the prosecution",
            "defence lawyers",
            "detectives",
            "police officers",
            "the jury",
            "the judge",
            "witnesses",
        ),
        "age": ("19", "23", "27", "31", "42", "56"),
        "sentences": (
            "The defendant, who denies the charge, was granted bail on condition that he lives at an address in {place}.",
            "{who} said the stolen boats had been found moored in a creek near {place}.",
            "Magistrates fined the defendant and ordered him to pay compensation to the shop owner.",
            "The trial, expected to last {few} weeks, will resume at Quillhaven Court on {day}.",
            "Police said officers would patrol {place} on foot at night after a spate of car thefts.",
            "A {age}-year-old man from {place} was charged with burglary after police searched a flat on {day}.",
            "{who} told the court that the defendant had been seen near {place} shortly before midnight.",
            "Magistrates remanded the defendant in custody ahead of {thing} next month.",
            "{who} said {thing} came up among {n} cases heard at Quillhaven Court this week.",
            "The jury heard evidence from {few} witnesses before retiring to consider its verdict.",
            "Police appealed for witnesses after a break-in at a shop in {place} on {day} night.",
            "The judge sentenced the defendant to {few} years in prison, saying the offence had caused real fear.",
            "Detectives investigating {thing} have arrested {few} people and seized stolen goods.",
            "Reports of vandalism in {place} have risen by {pct} per cent, police figures show.",
            "{who} asked for bail conditions to keep the defendant away from {place}.",
        ),
        "titles": (
            "Man charged after {place} burglary",
            "Jury retires in {thing}",
            "Police appeal after break-in at {place}",
            "{place} vandalism: arrests made",
            "Judge jails defendant over {thing}",
        ),
        "section": "crime",
        "words": (
            "court",
            "defendant",
            "police",
            "jury",
            "burglary",
            "witnesses",
            "judge",
            "magistrates",
            "detectives",
            "prosecution",
        ),
    },
    "storms and weather": {
        "thing": (
            "the storm surge",
            "the gale",
            "the flood defences",
            "the storm",
            "gale-force winds",
            "the flood warning",
            "high tides",
            "heavy rain",
            "the coastal flooding",
            "power cuts",
            "the clean-up",
            "storm damage",
            "the breach in the sea wall",
            "the weather warning",
            "fallen trees",
        ),
        "who": (
            "the lifeboat crew",
            "weather forecasters",
            "forecasters",
            "the coastguard",
            "emergency crews",
            "residents",
            "the fire service",
            "volunteers",
            "insurers",
            "electricity engineers",
        ),
        "wind": ("60", "70", "75", "82", "90"),
        "sentences": (
            "Forecasters issued a flood warning for low-lying streets in {place} ahead of the spring tides.",
            "The storm tore roofs from {few} beach huts and scattered debris across the promenade.",
            "{who} said the storm was the strongest to hit the coast since records began at North Pier.",
            "Sandbags were stacked outside shops in {place} as the coastguard urged people to stay away from the sea front.",
            "Emergency crews pumped water from flooded cellars in {place} through the night.",
            "Gusts of up to {wind} miles an hour battered {place} overnight, bringing down trees and power lines.",
            "{who} warned that {thing} could return on {day} as another low-pressure system approaches.",
            "Waves broke over the sea wall at {place}, flooding cellars and closing the coast road.",
            "{who} handed out sandbags to homes in {place} as the tide peaked.",
            "More than {bign} homes were left without electricity after {thing}.",
            "The coastguard rescued {few} people from a yacht that lost its mast off North Pier.",
            "Rainfall in {month} was {pct} per cent above the seasonal average, forecasters said.",
            "{who} said the clean-up after {thing} would take {few} weeks and cost {amount}.",
            "Schools in {place} closed early as {thing} swept in from the sea.",
        ),
        "titles": (
            "Storm batters {place} overnight",
            "Flood warning for the coast as high tides return",
            "Clean-up begins after gale",
            "{who} on alert as winds rise",
            "Homes without power after storm",
        ),
        "section": "weather",
        "words": (
            "storm",
            "gusts",
            "winds",
            "flooding",
            "flood",
            "sandbags",
            "coastguard",
            "rainfall",
            "gale",
            "forecasters",
        ),
    },
    "council budget": {
        "thing": (
            "the energy bill",
            "the capital programme",
            "the pension fund",
            "the council budget",
            "council tax",
            "the spending plan",
            "the funding gap",
            "the reserves",
            "the borrowing limit",
            "the savings package",
            "the harbour levy",
            "library funding",
            "the audit report",
            "the regional grant",
            "street-cleaning contracts",
        ),
        "who": (
            "the budget scrutiny panel",
            "council finance officers",
            "the finance committee",
            "the city treasurer",
            "opposition councillors",
            "auditors",
            "the mayor's office",
            "trade unions",
            "ratepayers",
            "the cabinet",
        ),
        "sentences": (
            "The cabinet will publish its draft budget on {day}, with savings from {thing} expected.",
            "{who} warned that rising energy bills had added {amount} to the cost of running council buildings.",
            "Auditors said the council's reserves could run out within {few} years without further savings.",
            "Opposition councillors proposed a tax on holiday lets to fund street cleaning and libraries.",
            "The finance committee approved borrowing of {amount} for repairs to schools and the sea wall.",
            "{who} said {thing} left a gap of {amount} to close before the end of the financial year.",
            "Council tax bills will rise by {pct} per cent from {month} under the draft budget.",
            "{who} accused the cabinet of raiding the reserves to avoid cuts before the election.",
            "The finance committee will vote on {thing} on {day}, after {few} weeks of consultation.",
            "Auditors found that {thing} had been overspent by {amount} last year.",
            "Libraries in {place} face shorter opening hours under the savings package.",
            "{who} want {thing} to protect youth services and street cleaning from further cuts.",
            "Borrowing for the harbour barrier would add {amount} a year to debt repayments, {who} said.",
            "The city treasurer warned that {thing} depended on a grant that has not yet been confirmed.",
        ),
        "titles": (
            "Council tax to rise {pct} per cent",
            "{who} clash over {thing}",
            "Budget gap forces cuts to {place} services",
            "Auditors question council spending",
            "Treasurer warns reserves are running low",
        ),
        "section": "council",
        "words": (
            "budget",
            "tax",
            "spending",
            "reserves",
            "cuts",
            "treasurer",
            "finance",
            "auditors",
            "borrowing",
            "savings",
        ),
    },
    "arts festival": {
        "thing": (
            "the fireworks finale",
            "the jazz evening",
            "the photography prize",
            "the arts festival",
            "the lantern parade",
            "the harbour light show",
            "the sculpture trail",
            "the open studios weekend",
            "the folk music stage",
            "the street theatre programme",
            "the poetry tent",
            "the festival fringe",
            "the exhibition at the Ropewalk Gallery",
            "the film nights on the quay",
            "the children's craft marquee",
        ),
        "who": (
            "the festival director",
            "young artists",
            "festival organisers",
            "local artists",
            "musicians",
            "the arts council",
            "gallery owners",
            "festival volunteers",
            "performers",
            "visitors",
        ),
        "crowd": ("8,000", "12,000", "15,000", "20,000"),
        "sentences": (
            "Artists from {place} will show paintings, prints and ceramics in the Ropewalk Gallery.",
            "{who} said the festival brought {amount} into the local economy last year.",
            "A choir of {n} singers will open the festival with a concert on the quay.",
            "The poetry tent will host readings by writers from across the region on {day}.",
            "Organisers said {thing} would close the festival with fireworks over the harbour.",
            "{who} expect more than {crowd} visitors for {thing} this year.",
            "The lantern parade will wind from {place} to the harbour on {day} evening.",
            "{who} said {thing} would feature {n} new works by artists from along the coast.",
            "Tickets for {thing} went on sale on {day}, with concessions for students and pensioners.",
            "Painters and sculptors in {place} will open their studios to the public for {thing}.",
            "{who} received a grant of {amount} to stage {thing} in the old rope works.",
            "Musicians will perform on {few} stages along the Esplanade over the festival weekend.",
            "{who} praised the exhibition's mix of seascapes, textiles and photography.",
            "Street performers, choirs and poets are booked for {thing}, organisers confirmed.",
        ),
        "titles": (
            "Festival programme unveiled",
            "Lantern parade lights up {place}",
            "{who} prepare for the arts festival",
            "Open studios draw crowds to {place}",
            "Arts festival funding secured",
        ),
        "section": "arts",
        "words": (
            "festival",
            "artists",
            "parade",
            "exhibition",
            "musicians",
            "gallery",
            "studios",
            "performers",
            "sculptors",
            "poets",
        ),
    },
}

# --- outlets: name -> domain, boilerplate lines (each with the share of articles carrying it) --
OUTLETS = {
    "Quillhaven Courier": {
        "domain": "quillhavencourier.example",
        "url": "https://{domain}/{section}/{ymd}/{slug}-{serial}",
        "boilerplate": (
            (
                "Sign up for the Courier's morning newsletter to get Quillhaven's news in your inbox.",
                0.9,
            ),
            ("Share this story: email | social | print", 0.85),
            (
                "We use cookies to improve your experience. By continuing to browse you accept our cookie policy.",
                0.8,
            ),
        ),
    },
    "Harbour Hall Bulletin": {
        "domain": "bulletin.quillhaven.example",
        "url": "https://{domain}/news/{serial}-{slug}",
        "boilerplate": (
            ("The Harbour Hall Bulletin is published by Quillhaven City Council.", 0.95),
            ("Was this page helpful? Tell us how we can improve it.", 0.85),
        ),
    },
    "The Gullcry": {
        "domain": "gullcry.example",
        "url": "https://{domain}/{section}/{slug}-{serial}.html",
        "boilerplate": (
            ("GOT A STORY? Contact the Gullcry newsdesk - we pay for tips.", 0.9),
            ("Share on social | Comments | Print", 0.9),
            ("This site uses cookies. Accept all | Manage settings", 0.8),
        ),
    },
    "Lantern Row Notes": {
        "domain": "lanternrownotes.example",
        "url": "https://{domain}/{ym}/{slug}-{serial}/",
        "boilerplate": (
            (
                "Lantern Row Notes is written by neighbours, for neighbours. Sign up for our weekly newsletter.",
                0.85,
            ),
            ("Leave a comment below and share this post with your neighbours.", 0.8),
        ),
    },
    "Saltreach Wire": {
        "domain": "saltreachwire.example",
        "url": "https://{domain}/story/{serial}",
        "boilerplate": (
            ("Copyright Saltreach Wire. Republication only with permission.", 0.95),
            ("Reporting by the Saltreach Wire coastal desk.", 0.85),
        ),
    },
}

WIRE = "Saltreach Wire"
DATELINE = "QUILLHAVEN (Saltreach Wire) - "
# Rows repeating an article under another link: tracking parameters, ``www.``, a fragment.
URL_VARIANTS = (
    "{url}?utm_source=newsletter&utm_medium=email&utm_campaign=morning-briefing",
    "{url}?fbclid={token}",
    "{www}#comments",
    "{url}?utm_source=social&utm_medium=share&gclid={token}",
)
ATTRIBUTION = "This story first appeared on the Saltreach Wire and is republished with permission."


# --- rendering: templates -> sentences -> articles ----------------------------------------------
# Strings are built with numpy object arrays (element-wise ``+`` runs in C), grouped by
# template, so 200,000 articles take seconds rather than a Python loop per sentence.
_FIELD = re.compile(r"\{([a-z]+)\d*\}")
_CHUNK = 8192  # articles per batch of random draws; fixed, so the output never depends on it
_SEPARATORS = np.array(["", "\n", " "], dtype=object)


def _parts(template: str, spec: dict) -> tuple[list[str], list[np.ndarray]]:
    """Literal pieces and banks of one template; a leading bank is capitalised."""
    names = _FIELD.findall(template)
    banks = [np.array(spec.get(name) or COMMON_BANKS[name], dtype=object) for name in names]
    literals = _FIELD.split(template)[::2]
    if names and literals[0] == "":
        banks[0] = np.array([w[0].upper() + w[1:] for w in banks[0]], dtype=object)
    return literals, banks


@functools.cache
def _compiled() -> SimpleNamespace:
    """Templates in one flat list, per-theme offsets and counts, boilerplate tables.

    Each article walks through its theme's templates along a cycle (random start,
    random stride coprime with the count), so no template repeats inside a block
    no longer than the theme's template count.
    """
    flat, s_off, s_cnt, t_off, t_cnt, strides = [], [], [], [], [], []
    for spec in THEMES.values():
        for templates, off, cnt in (
            (spec["sentences"] + GENERIC, s_off, s_cnt),
            (spec["titles"], t_off, t_cnt),
        ):
            off.append(len(flat))
            cnt.append(len(templates))
            flat.extend(_parts(template, spec) for template in templates)
        strides.append([s for s in range(1, s_cnt[-1]) if math.gcd(s, s_cnt[-1]) == 1])
    width = max(map(len, strides))
    n_lines = max(len(spec["boilerplate"]) for spec in OUTLETS.values())
    shares = np.zeros((len(OUTLETS), n_lines))
    # tails[outlet, bits]: the outlet's boilerplate lines whose bit is set, each after a line break
    tails = np.empty((len(OUTLETS), 2**n_lines), dtype=object)
    for o, spec in enumerate(OUTLETS.values()):
        shares[o, : len(spec["boilerplate"])] = [share for _, share in spec["boilerplate"]]
        for bits in range(2**n_lines):
            lines = [line for j, (line, _) in enumerate(spec["boilerplate"]) if bits >> j & 1]
            tails[o, bits] = "".join("\n" + line for line in lines)
    return SimpleNamespace(
        flat=flat,
        s_off=np.array(s_off),
        s_cnt=np.array(s_cnt),
        t_off=np.array(t_off),
        t_cnt=np.array(t_cnt),
        n_strides=np.array([len(s) for s in strides]),
        strides=np.array([s + [1] * (width - len(s)) for s in strides]),
        slots=max(len(banks) for _, banks in flat),
        shares=shares,
        tails=tails,
        wire=list(OUTLETS).index(WIRE),
    )


def _concat(literals: list[str], columns: list[np.ndarray], n: int) -> np.ndarray:
    """``literals[0] + columns[0] + literals[1] + ...`` element-wise, as an object array."""
    text = np.full(n, literals[0], dtype=object)
    for column, literal in zip(columns, literals[1:], strict=True):
        text = text + column + literal
    return text


def _fill(tid: np.ndarray, draws: np.ndarray) -> np.ndarray:
    """Template ``tid[i]`` filled with bank entries picked by ``draws[i]``."""
    flat = _compiled().flat
    out = np.empty(len(tid), dtype=object)
    order = np.argsort(tid, kind="stable")
    ids, starts = np.unique(tid[order], return_index=True)
    for t, rows in zip(ids.tolist(), np.split(order, starts[1:]), strict=True):
        literals, banks = flat[t]
        picks = [bank[draws[rows, j] % len(bank)] for j, bank in enumerate(banks)]
        out[rows] = _concat(literals, picks, len(rows))
    return out


def _join(
    sentences: np.ndarray,
    counts: np.ndarray,
    outlets: np.ndarray,
    keep_lines: np.ndarray,
    tail: str = "",
) -> np.ndarray:
    """Articles: paragraphs of two or three sentences, one per line, the wire's dateline,
    then ``tail`` and the outlet's boilerplate lines that ``keep_lines`` keeps."""
    c = _compiled()
    starts = np.cumsum(counts) - counts
    pos = np.arange(len(sentences)) - np.repeat(starts, counts)
    k = np.repeat(counts, counts)
    last_par = np.maximum(1, k // 2) - 1
    ends_par = np.minimum(pos // 2, last_par) != np.minimum((pos + 1) // 2, last_par)
    sep = _SEPARATORS[np.where(pos == k - 1, 0, np.where(ends_par, 1, 2))]
    pieces = sentences + sep
    wire = starts[outlets == c.wire]
    pieces[wire] = DATELINE + pieces[wire]
    bits = (keep_lines * (1 << np.arange(keep_lines.shape[1]))).sum(axis=1)
    return np.add.reduceat(pieces, starts) + tail + c.tails[outlets, bits]


def _keep_lines(rng, outlets: np.ndarray) -> np.ndarray:
    shares = _compiled().shares
    return rng.random((len(outlets), shares.shape[1])) < shares[outlets]


def _render_chunk(rng, plan: dict, rows: slice):
    """Sentences (in article order), titles and texts of the articles in ``rows``."""
    c = _compiled()
    ns, nf = plan["n_sent"][rows], plan["n_first"][rows]
    first_theme, second_theme, outlets = (
        plan["theme"][rows],
        plan["second"][rows],
        plan["outlet"][rows],
    )
    doc = np.repeat(np.arange(len(ns)), ns)
    pos = np.arange(len(doc)) - np.repeat(np.cumsum(ns) - ns, ns)
    first = pos < nf[doc]
    theme = np.where(first, first_theme[doc], second_theme[doc])
    u = rng.random((len(ns), 4))
    start = np.where(first, u[doc, 0], u[doc, 1])
    pick = (np.where(first, u[doc, 2], u[doc, 3]) * c.n_strides[theme]).astype(np.int64)
    cnt = c.s_cnt[theme]
    step = np.where(first, pos, pos - nf[doc]) * c.strides[theme, pick]
    tid = c.s_off[theme] + ((start * cnt).astype(np.int64) + step) % cnt
    sentences = _fill(tid, rng.integers(0, 2**31, (len(doc), c.slots)))
    t_tid = c.t_off[first_theme] + (rng.random(len(ns)) * c.t_cnt[first_theme]).astype(np.int64)
    titles = _fill(t_tid, rng.integers(0, 2**31, (len(ns), c.slots)))
    return sentences, titles, _join(sentences, ns, outlets, _keep_lines(rng, outlets))


def render(plan: dict, seed: int) -> tuple[list[str], list[str]]:
    """Titles and texts of every planned row (see ``tm_compare.demo``)."""
    rng = np.random.default_rng([seed, 1])
    n = len(plan["source"])
    titles, texts, originals = [], [], {rows[0]: None for rows in plan["stories"]}
    for start in range(0, n, _CHUNK):
        rows = slice(start, min(n, start + _CHUNK))
        sentences, t, x = _render_chunk(rng, plan, rows)
        titles.extend(t.tolist())
        texts.extend(x.tolist())
        bounds = np.cumsum(plan["n_sent"][rows]) - plan["n_sent"][rows]
        for row in (r for r in originals if rows.start <= r < rows.stop):
            begin = bounds[row - start]
            originals[row] = sentences[begin : begin + plan["n_sent"][row]]
    # Syndicated copies: the wire's sentences less one, with an attribution line.
    copies = [(row, rows[0]) for rows in plan["stories"] for row in rows[1:]]
    if copies:
        drops = [int(rng.integers(1, len(originals[o]))) for _, o in copies]
        kept = [np.delete(originals[o], d) for (_, o), d in zip(copies, drops, strict=True)]
        rows = np.array([row for row, _ in copies])
        outlets = plan["outlet"][rows]
        joined = _join(
            np.concatenate(kept),
            np.array([len(s) for s in kept]),
            outlets,
            _keep_lines(rng, outlets),
            "\n" + ATTRIBUTION,
        )
        for row, text in zip(rows.tolist(), joined.tolist(), strict=True):
            texts[row] = text
    for original, variants in plan["variants"]:
        for row in variants:
            titles[row], texts[row] = titles[original], texts[original]
    return titles, texts


def urls(plan: dict, titles: list[str]) -> list[str]:
    """One URL per row, under the reserved ``.example`` top-level domain (RFC 2606).

    Each outlet has its own URL layout; URL variants repeat their article's URL
    with tracking parameters, ``www.`` or a fragment added.
    """
    n = len(titles)
    days, day_of = np.unique(plan["date"], return_inverse=True)
    ymd = np.array([str(d).replace("-", "/") for d in days], dtype=object)
    slug_of = {t: "-".join(re.findall(r"[a-z0-9]+", t.lower())[:7]) for t in set(titles)}
    values = {
        "domain": np.array([spec["domain"] for spec in OUTLETS.values()], dtype=object)[
            plan["outlet"]
        ],
        "section": np.array([spec["section"] for spec in THEMES.values()], dtype=object)[
            plan["theme"]
        ],
        "ymd": ymd[day_of],
        "ym": np.array([d[:7] for d in ymd], dtype=object)[day_of],
        "slug": np.array([slug_of[t] for t in titles], dtype=object),
        "serial": np.arange(100_000, 100_000 + n).astype(str).astype(object),
    }
    out = np.empty(n, dtype=object)
    for o, spec in enumerate(OUTLETS.values()):
        rows = np.flatnonzero(plan["outlet"] == o)
        names = _FIELD.findall(spec["url"])
        out[rows] = _concat(
            _FIELD.split(spec["url"])[::2], [values[k][rows] for k in names], len(rows)
        )
    for g, (original, variants) in enumerate(plan["variants"]):
        for j, row in enumerate(variants):
            url = out[original]
            out[row] = URL_VARIANTS[(g + j) % len(URL_VARIANTS)].format(
                url=url,
                token=f"{(row * 2654435761) % 16**10:010x}",
                www=url.replace("https://", "https://www.", 1),
            )
    return out.tolist()
