"""The Tollbridge Valley Jobs board's data: towns, employers, job families and the text they are written with.

Everything here is invented (docs/scenario.md describes the world): no real company, person,
brand or body. Each family lists titles that mean the same job (equivalent) and roles that are
close but different (related); duty and requirement sentences use {t} for the posting's own
title variant. `generate.py` writes postings from these tables.
"""

from __future__ import annotations

from demo_postings.families import Family

TOWNS = [
    "Tollbridge",
    "Marrow Quay",
    "Wendle Cross",
    "Hensby",
    "Copperwick",
    "Little Aldon",
    "Saltmarsh End",
    "Greywater",
]

EMPLOYERS = {
    "care": [
        "Hensby Community Hospital",
        "Tollbridge General Infirmary",
        "Marrow Quay Care Homes",
        "Tessledown Home Care",
        "Greywater Nursing Agency",
        "Little Aldon Hospice",
    ],
    "logistics": [
        "Corrimore Freight",
        "Wendle Cross Distribution Park",
        "Copperwick Haulage",
        "Sparrowgate Parcel Runners",
        "Saltmarsh Cold Store",
    ],
    "hospitality": [
        "The Tinderwick Kettle",
        "The Oarsmere Inn",
        "Marrow Quay Brasserie",
        "Tollbridge Riverside Hotel",
        "Hensby Tea Rooms",
    ],
    "building": [
        "Wendle Cross Build Co",
        "Greywater Joinery Works",
        "Copperwick Electrical Services",
        "Saltmarsh Heating & Plumbing",
        "Tollbridge Shopfit Ltd",
    ],
    "schools": [
        "Little Aldon Primary School",
        "Hensby Academy",
        "Pipwick Nursery",
        "Copperwick Infant School",
        "Tollbridge Day Nursery",
    ],
    "office": [
        "Ledgerwell Accountants",
        "Marrow Quay Council Offices",
        "Wendle Cross Data Centre",
        "Tollbridge Contact Centre",
        "Copperwick Manufacturing",
    ],
}

AGENCIES = ["Vellacott Staffing", "Hollowmere Recruitment", "Tollbridge Temps"]

# Each employer's house style: which of a family's title variants it leans to (the synonym gap:
# most postings of one employer use one variant). Fixed numbers, so renaming an employer changes no posting.
HOUSE_STYLE = {
    "Hensby Community Hospital": 22,
    "Tollbridge General Infirmary": 43,
    "Marrow Quay Care Homes": 51,
    "Tessledown Home Care": 26,
    "Greywater Nursing Agency": 19,
    "Little Aldon Hospice": 35,
    "Corrimore Freight": 22,
    "Wendle Cross Distribution Park": 40,
    "Copperwick Haulage": 34,
    "Sparrowgate Parcel Runners": 53,
    "Saltmarsh Cold Store": 58,
    "The Tinderwick Kettle": 27,
    "The Oarsmere Inn": 42,
    "Marrow Quay Brasserie": 0,
    "Tollbridge Riverside Hotel": 25,
    "Hensby Tea Rooms": 51,
    "Wendle Cross Build Co": 56,
    "Greywater Joinery Works": 8,
    "Copperwick Electrical Services": 23,
    "Saltmarsh Heating & Plumbing": 31,
    "Tollbridge Shopfit Ltd": 21,
    "Little Aldon Primary School": 48,
    "Hensby Academy": 21,
    "Pipwick Nursery": 24,
    "Copperwick Infant School": 55,
    "Tollbridge Day Nursery": 42,
    "Ledgerwell Accountants": 35,
    "Marrow Quay Council Offices": 44,
    "Wendle Cross Data Centre": 9,
    "Tollbridge Contact Centre": 21,
    "Copperwick Manufacturing": 43,
    "Vellacott Staffing": 10,
    "Hollowmere Recruitment": 43,
    "Tollbridge Temps": 25,
}


# Duty and requirement sentences use {t} for the posting's own title variant.
FAMILIES: list[Family] = [
    # ---- care and health
    Family(
        "registered nurse",
        "care",
        ["registered nurse", "staff nurse", "rn", "ward nurse"],
        ["charge nurse", "nurse practitioner", "healthcare assistant"],
        [
            "As a {t} you will assess, plan and deliver patient care on a busy ward",
            "The {t} administers medication and keeps accurate clinical records",
            "You will manage a caseload of patients and carry out wound care and observations",
            "Our {t} team looks after adult inpatients recovering from surgery",
            "You will take charge of a bay of patients and escalate concerns to the medical team",
        ],
        [
            "You must hold a current nursing registration",
            "Experience of acute medicine or surgery is welcome but newly qualified {t} applicants are supported",
            "A preceptorship programme is offered to every new {t}",
        ],
        ["charge nurse", "healthcare assistant"],
    ),
    Family(
        "charge nurse",
        "care",
        ["charge nurse", "ward manager", "ward sister"],
        ["registered nurse", "nurse practitioner"],
        [
            "The {t} leads the nursing team and runs the ward on a day to day basis",
            "As {t} you will manage rotas, budgets and staff appraisals",
            "You will be the {t} in charge of bed management and safe staffing on the ward",
        ],
        [
            "You must hold a current nursing registration and leadership experience",
            "Several years as a staff nurse on a busy ward before stepping up to {t} is expected",
        ],
        ["staff nurse", "healthcare assistant"],
        coded=["ward sister"],
    ),
    Family(
        "nurse practitioner",
        "care",
        ["nurse practitioner", "advanced nurse practitioner", "anp"],
        ["registered nurse", "charge nurse"],
        [
            "The {t} runs minor illness clinics and prescribes within their competence",
            "As {t} you will see undifferentiated patients and make diagnoses",
            "You will work alongside the doctors in our minor injuries unit as {t}",
        ],
        [
            "A prescribing qualification and a masters in advanced practice are required for the {t} role",
            "You must hold a current nursing registration",
        ],
        ["staff nurse"],
    ),
    Family(
        "healthcare assistant",
        "care",
        ["healthcare assistant", "hca", "nursing assistant", "care assistant"],
        ["senior carer", "support worker"],
        [
            "The {t} supports nurses with personal care, feeding and mobility of patients",
            "As a {t} you will record observations such as blood pressure and temperature",
            "You will help patients wash and dress and keep the ward clean and safe as {t}",
            "Our {t} staff make beds, take patients to appointments and report changes to the nurse in charge",
        ],
        [
            "A care certificate is desirable and full training is given to every {t}",
            "No formal qualifications are needed, just kindness and patience",
        ],
        ["staff nurse", "senior carer"],
    ),
    Family(
        "support worker",
        "care",
        ["support worker", "care worker", "carer", "domiciliary carer"],
        ["senior carer", "healthcare assistant"],
        [
            "As a {t} you will visit clients in their own homes and help with daily living",
            "The {t} helps people with learning disabilities live independently in the community",
            "You will support service users with shopping, cooking and medication prompts",
            "Each {t} follows an agreed care plan and builds trust with the people they support",
        ],
        [
            "A full driving licence and access to a car are essential for our {t} visits",
            "An enhanced background check will be completed for every {t}",
        ],
        ["senior carer"],
    ),
    Family(
        "senior carer",
        "care",
        ["senior carer", "senior care assistant", "care team leader"],
        ["support worker", "healthcare assistant"],
        [
            "The {t} leads a shift of care staff in our residential home",
            "As {t} you will administer medication and complete care plan reviews",
            "You will supervise and mentor new carers as {t}",
        ],
        [
            "Previous experience as a carer and a level three care diploma are needed for the {t} role",
        ],
        ["care assistant", "carer"],
    ),
    # ---- logistics
    Family(
        "hgv driver",
        "logistics",
        ["hgv driver", "lorry driver", "class 1 driver", "c+e driver", "truck driver"],
        ["van driver", "multi-drop driver"],
        [
            "As an {t} you will deliver full loads to distribution centres across the region",
            "The {t} completes walkaround checks and tachograph records before every trunk run",
            "You will drive an articulated vehicle on night trunking routes as {t}",
            "Our {t} team runs tramping work with nights out in a sleeper cab",
        ],
        [
            "You must hold a category c+e licence and a driver qualification card",
            "Applicants need at least two years of artic experience and no more than six points",
        ],
        ["van driver", "warehouse operative"],
    ),
    Family(
        "delivery driver",
        "logistics",
        ["delivery driver", "van driver", "multi-drop driver", "courier"],
        ["hgv driver"],
        [
            "As a {t} you will deliver parcels to homes and businesses on a set route",
            "The {t} loads the van each morning and uses a handheld scanner for proof of delivery",
            "You will make up to one hundred drops a day as {t}",
            "Every {t} is given a liveried van, fuel card and route plan",
        ],
        [
            "A full manual driving licence held for two years is needed for the {t} role",
            "Good knowledge of the valley roads helps every {t}",
        ],
        ["hgv driver", "warehouse operative"],
    ),
    Family(
        "forklift operator",
        "logistics",
        ["forklift operator", "flt driver", "counterbalance driver", "reach truck operator"],
        ["warehouse operative"],
        [
            "As a {t} you will load and unload trailers and move pallets to racking",
            "The {t} carries out daily truck checks and keeps the loading bay clear",
            "You will put away stock at height and replenish pick faces as {t}",
        ],
        [
            "A valid forklift licence is essential and counterbalance and reach truck tickets are an advantage",
            "Every {t} must complete our site induction and safe lifting course",
        ],
        ["warehouse operative", "hgv driver"],
    ),
    Family(
        "warehouse operative",
        "logistics",
        ["warehouse operative", "picker packer", "order picker", "warehouse associate"],
        ["forklift operator"],
        [
            "As a {t} you will pick and pack customer orders accurately using a handheld scanner",
            "The {t} checks goods in, labels parcels and keeps the warehouse tidy",
            "You will hit pick rates and help with stock counts as {t}",
        ],
        [
            "No experience is needed as full training is given to every {t}",
            "Safety boots and high visibility clothing are provided",
        ],
        ["forklift operator", "flt driver"],
    ),
    Family(
        "machine operator",
        "logistics",
        ["machine operator", "production operative", "cnc operator"],
        ["warehouse operative"],
        [
            "As a {t} you will set up and run production machinery on the factory floor",
            "The {t} checks parts against drawings and records quality checks",
            "You will change tooling and clear jams on the line as {t}",
        ],
        ["Experience in a manufacturing environment is useful for the {t} role"],
        ["warehouse operative"],
    ),
    # ---- hospitality
    Family(
        "chef de partie",
        "hospitality",
        ["chef de partie", "line cook", "section chef"],
        ["sous chef", "commis chef"],
        [
            "As {t} you will run your own section of the kitchen during busy services",
            "The {t} preps fresh ingredients and cooks dishes to the head chef's standard",
            "You will keep your section clean and rotate stock as {t}",
        ],
        [
            "A food hygiene certificate level 2 is required for every {t}",
            "Two years in a fresh food kitchen is expected of our {t}",
        ],
        ["sous chef", "commis chef", "kitchen porter"],
    ),
    Family(
        "sous chef",
        "hospitality",
        ["sous chef", "second chef", "junior sous chef"],
        ["chef de partie"],
        [
            "The {t} runs the kitchen in the head chef's absence",
            "As {t} you will write menus, order stock and train the brigade",
        ],
        ["A food hygiene certificate level 2 and kitchen management experience are required for the {t}"],
        ["chef de partie", "commis chef"],
    ),
    Family(
        "commis chef",
        "hospitality",
        ["commis chef", "prep cook", "kitchen assistant"],
        ["chef de partie", "kitchen porter"],
        [
            "As a {t} you will prepare vegetables, sauces and cold starters",
            "The {t} learns every section of the kitchen under the chef de partie",
        ],
        ["No experience needed as our {t} roles include full training"],
        ["chef de partie", "kitchen porter"],
    ),
    Family(
        "kitchen porter",
        "hospitality",
        ["kitchen porter", "kp", "dishwasher", "pot washer"],
        ["commis chef"],
        [
            "As {t} you will wash pots, pans and crockery and keep the kitchen spotless",
            "The {t} empties bins, cleans floors and helps the chefs with basic prep",
            "You will keep the pot wash area running smoothly during service as {t}",
        ],
        ["No experience is needed to start as {t}"],
        ["commis chef", "chef de partie"],
    ),
    Family(
        "waiting staff",
        "hospitality",
        ["waiter", "waitress", "server", "front of house assistant"],
        ["bartender", "barista"],
        [
            "As a {t} you will greet guests, take orders and serve food to tables",
            "The {t} lays tables, explains the menu and handles payments",
            "You will give friendly service in our restaurant as {t}",
            "Our {t} team looks after guests from arrival to departure",
        ],
        ["Previous table service experience is welcome but not essential for the {t} role"],
        ["bartender"],
        coded=["waitress"],
    ),
    Family(
        "bartender",
        "hospitality",
        ["bartender", "bar staff", "bar person"],
        ["waiter"],
        [
            "As {t} you will pour drinks, mix cocktails and keep the bar stocked",
            "The {t} changes barrels and checks identification for age restricted sales",
        ],
        ["You must be over eighteen to work as {t}"],
        ["waiter"],
    ),
    Family(
        "barista",
        "hospitality",
        ["barista", "coffee shop assistant"],
        ["waiter"],
        [
            "As {t} you will make espresso drinks and serve cakes at the counter",
            "The {t} keeps the coffee machine clean and dials in the grinder each morning",
        ],
        ["Latte art skills help but training is given to every {t}"],
        ["waiter"],
    ),
    # ---- building trades
    Family(
        "electrician",
        "building",
        ["electrician", "qualified electrician", "electrical installer", "spark"],
        ["electrical engineer", "apprentice electrician"],
        [
            "As an {t} you will install and test wiring, sockets and lighting on domestic and commercial sites",
            "The {t} carries out fault finding, inspection and testing and issues certificates",
            "You will wire consumer units and containment on new build housing as {t}",
        ],
        [
            "A level three electrical qualification and a site safety card are required for every {t}",
            "Your own hand tools and a van are provided for our {t} team",
        ],
        ["apprentice electrician", "plumber"],
    ),
    Family(
        "apprentice electrician",
        "building",
        ["apprentice electrician", "electrician apprentice", "electrical apprentice"],
        ["electrician"],
        [
            "As an {t} you will learn to install wiring under the supervision of a qualified electrician",
            "The {t} attends college one day a week while working on site",
        ],
        ["No experience needed as the {t} scheme includes college fees"],
        ["electrician"],
    ),
    Family(
        "electrical engineer",
        "building",
        ["electrical engineer", "electrical design engineer"],
        ["electrician"],
        [
            "As an {t} you will design power and lighting systems for commercial buildings",
            "The {t} produces drawings and cable calculations for the site teams",
        ],
        ["A degree in electrical engineering is required for the {t} role"],
        ["electrician"],
    ),
    Family(
        "plumber",
        "building",
        ["plumber", "plumbing engineer", "heating engineer"],
        ["gas engineer"],
        [
            "As a {t} you will install bathrooms, radiators and pipework in homes",
            "The {t} repairs leaks, replaces cylinders and services heating systems",
            "You will fit first and second fix plumbing on new build sites as {t}",
        ],
        ["A level two plumbing qualification is required for every {t}"],
        ["gas engineer", "electrician"],
    ),
    Family(
        "gas engineer",
        "building",
        ["gas engineer", "gas fitter", "boiler engineer"],
        ["plumber"],
        [
            "As a {t} you will service and repair boilers in customers' homes",
            "The {t} carries out landlord gas safety checks and commissions new boilers",
        ],
        ["You must be on the national gas safety register to work as {t}"],
        ["plumber"],
    ),
    Family(
        "carpenter",
        "building",
        ["carpenter", "joiner", "chippy", "site carpenter"],
        ["shopfitter"],
        [
            "As a {t} you will hang doors, fit skirting and build staircases on site",
            "The {t} carries out first and second fix joinery on new homes",
            "You will build roofs and stud walls from drawings as {t}",
        ],
        ["Your own tools and a site safety card are required for every {t}"],
        ["shopfitter", "electrician"],
    ),
    Family(
        "shopfitter",
        "building",
        ["shopfitter", "shop fitter"],
        ["carpenter"],
        [
            "As a {t} you will install counters, shelving and displays in retail units",
            "The {t} works nights to refit stores while they are closed",
        ],
        ["Experience with joinery and a site safety card are required for the {t}"],
        ["carpenter"],
    ),
    # ---- schools and childcare
    Family(
        "teaching assistant",
        "schools",
        ["teaching assistant", "classroom assistant", "learning support assistant", "ta"],
        ["cover supervisor"],
        [
            "As a {t} you will support pupils with reading and maths in small groups",
            "The {t} works with the class teacher to help children with special educational needs",
            "You will prepare classroom resources and supervise break times as {t}",
        ],
        [
            "An enhanced background check is required for every {t}",
            "Experience with primary age children is welcome for the {t} role",
        ],
        ["cover supervisor"],
    ),
    Family(
        "cover supervisor",
        "schools",
        ["cover supervisor", "cover teacher"],
        ["teaching assistant"],
        [
            "As {t} you will supervise classes when the usual teacher is absent",
            "The {t} delivers pre-set lessons and manages behaviour in secondary classrooms",
        ],
        ["An enhanced background check is required for the {t} role"],
        ["teaching assistant"],
    ),
    Family(
        "early years practitioner",
        "schools",
        ["early years practitioner", "nursery practitioner", "nursery nurse", "nursery assistant"],
        ["teaching assistant"],
        [
            "As a {t} you will plan play based activities for babies and toddlers",
            "The {t} observes children's development and keeps their learning journals up to date",
            "You will be a key person for a small group of children in the nursery as {t}",
        ],
        [
            "A level three early years qualification is required for every {t}",
            "A paediatric first aid certificate is an advantage for our {t}",
        ],
        ["teaching assistant"],
    ),
    # ---- office and IT
    Family(
        "it support",
        "office",
        ["it support technician", "service desk analyst", "helpdesk analyst", "1st line support"],
        ["systems administrator"],
        [
            "As {t} you will log and resolve user tickets by phone and email",
            "The {t} sets up laptops, resets passwords and fixes printer faults",
            "You will escalate complex incidents to the infrastructure team as {t}",
        ],
        [
            "Good customer service skills and some knowledge of desktop operating systems help every {t}",
        ],
        ["systems administrator"],
    ),
    Family(
        "systems administrator",
        "office",
        ["systems administrator", "sysadmin", "server administrator", "infrastructure engineer"],
        ["it support technician"],
        [
            "As {t} you will maintain physical and virtual servers and the storage they use",
            "The {t} patches servers, manages backups and monitors the network",
            "You will automate server builds with scripts as {t}",
        ],
        ["Experience with shell scripting and configuration tools is a plus for the {t} role"],
        ["service desk analyst"],
    ),
    Family(
        "accounts assistant",
        "office",
        ["accounts assistant", "bookkeeper", "finance assistant"],
        ["purchase ledger clerk", "payroll administrator"],
        [
            "As {t} you will reconcile bank statements and post journals",
            "The {t} prepares month end reports and chases overdue invoices",
            "You will keep the sales and purchase ledgers up to date as {t}",
        ],
        ["Strong spreadsheet skills are essential for the {t} role"],
        ["payroll administrator", "purchase ledger clerk"],
    ),
    Family(
        "purchase ledger clerk",
        "office",
        ["purchase ledger clerk", "accounts payable clerk"],
        ["accounts assistant"],
        [
            "As {t} you will match supplier invoices to purchase orders",
            "The {t} prepares the weekly payment run and answers supplier queries",
        ],
        ["Experience of high volume invoice processing helps the {t}"],
        ["accounts assistant"],
    ),
    Family(
        "payroll administrator",
        "office",
        ["payroll administrator", "payroll clerk"],
        ["accounts assistant"],
        [
            "As {t} you will process the monthly payroll for four hundred staff",
            "The {t} handles starters, leavers and pension deductions",
        ],
        ["Payroll software experience is needed for the {t} role"],
        ["accounts assistant"],
    ),
    Family(
        "call centre operator",
        "office",
        ["call centre operator", "customer service advisor", "contact centre agent"],
        ["it support technician"],
        [
            "As {t} you will answer inbound calls from customers about their accounts",
            "The {t} logs every call and resolves queries at first contact",
        ],
        ["A clear telephone manner is essential for the {t} role"],
        [],
    ),
]

MODIFIERS = ["senior", "junior", "trainee", "relief", "bank", "temporary", "part time", "nights"]

SECTOR_LINES = {
    "care": [
        "You will work as part of a caring multidisciplinary team",
        "Dignity, respect and compassion are at the heart of everything we do",
        "Paid training and a clear career pathway are offered",
    ],
    "logistics": [
        "Our depot operates around the clock to keep the valley supplied",
        "Overtime is available at time and a half",
        "Safety is our number one priority on site",
    ],
    "hospitality": [
        "Tips are shared fairly across the whole team",
        "Free meals on shift and staff discounts are included",
        "Join our young, energetic team in a lively venue",
    ],
    "building": [
        "Work is mainly on sites across the valley",
        "Travel time is paid and a company van may be available",
        "Health and safety on site comes first",
    ],
    "schools": [
        "Our school is a happy, inclusive place to learn",
        "Term time only with school holidays off",
        "Safeguarding children is everyone's responsibility",
    ],
    "office": [
        "Hybrid working is available after probation",
        "Our office is a short walk from the train station",
        "We offer study support for professional qualifications",
    ],
}

SHIFTS = {
    "care": ["4 on 4 off", "24/7 rota", "nights", "long days", "early and late shifts", "night shift"],
    "logistics": ["nights", "4 on 4 off", "days", "night shift", "24/7 rota", "weekend work"],
    "hospitality": ["evenings and weekends", "split shifts", "full time", "part time"],
    "building": ["monday to friday", "days", "full time"],
    "schools": ["term time only", "monday to friday", "part time"],
    "office": ["monday to friday", "full time", "part time", "days"],
}

BOILERPLATE = [
    "We are an equal opportunities employer and welcome applications from all sections of the community.",
    "Benefits include 28 days holiday, a workplace pension and free parking.",
    "To apply, please send your cv using the button below.",
    "Successful applicants will be contacted within five working days.",
    "We reserve the right to close this vacancy early if we receive a high number of applications.",
]

SALARY = {
    "care": [(11.4, 16.0, "hr"), (24500, 36000, "year")],
    "logistics": [(11.8, 17.5, "hr"), (26000, 42000, "year")],
    "hospitality": [(11.4, 14.5, "hr"), (23000, 32000, "year")],
    "building": [(14.0, 24.0, "hr"), (28000, 48000, "year")],
    "schools": [(11.4, 13.8, "hr"), (21000, 27000, "year")],
    "office": [(12.0, 18.0, "hr"), (24000, 45000, "year")],
}
