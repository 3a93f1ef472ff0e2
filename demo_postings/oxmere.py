"""The Oxmere Bay Work board's data: a second invented region, written differently from Tollbridge Valley.

Nothing here was seen when widen's thresholds and defaults were chosen (they were chosen on the
Tollbridge Valley board). Employers use several title variants and name the others only in
passing; employers and agencies paste the same boilerplate into every posting (agencies list
every town they cover); the markup is messier; titles are sometimes shouted; shift patterns are
spelled several ways. Everything is invented: no real company, person, brand or body.
"""

from __future__ import annotations

from demo_postings.families import Family

__all__ = ["TOWNS", "EMPLOYERS", "AGENCIES", "FAMILIES", "PASSING", "ABOUT", "AGENCY_ABOUT", "PATTERN_SPELLINGS"]

TOWNS = ["Oxmere", "Brackenholt", "Pellmire", "Quillwick", "Orrinsby", "Fennick Cross", "Marlstow", "Dunnock Ferry"]

# sector -> employers; every employer pastes its own "about us" paragraph (ABOUT) into each posting.
EMPLOYERS = {
    "care": ["Oxmere Bay Hospital", "Brackenholt Lodge Care", "Pellmire Community Care", "Quillwick Smile Dental"],
    "retail": ["Marlstow Market Stores", "Dunnock Pharmacy Group", "Orrinsby Home Goods"],
    "logistics": ["Fennick Cross Logistics", "Oxmere Port Haulage", "Bay Coaches Oxmere"],
    "hospitality": ["The Gull & Anchor Oxmere", "Brackenholt Harbour Hotel", "Pellmire Pier Kitchen"],
    "facilities": ["Quillwick Facility Services", "Orrinsby Borough Estates", "Marlstow Guarding"],
    "trades": ["Oxmere Bay Building", "Fennick Cross Electrical", "Dunnock Ferry Motors"],
    "schools": ["Pellmire Bay School", "Quillwick Little Acorns Nursery", "Orrinsby Learning Trust"],
    "office": ["Oxmere Bay Council", "Marlstow Mutual Contact Centre", "Brackenholt Accounts Bureau"],
}

AGENCIES = ["Baywide Recruitment Oxmere", "Harbourline Staffing", "Coastline Temps Marlstow"]

# Families. Titles are lower case, as the truth and the seekers write them; related titles are titles
# of other families (never a family name). `coded` marks gender-coded titles (see the README's caution).
FAMILIES: list[Family] = [
    Family(
        "healthcare assistant",
        "care",
        ["healthcare assistant", "hca", "nursing assistant", "clinical support worker"],
        ["registered nurse", "care assistant"],
        [
            "Supporting patients with washing, dressing and eating",
            "Taking and recording observations",
            "Helping the ward team with bed making and patient transfers",
            "Escorting patients to theatre and x-ray",
        ],
        ["Care certificate (or willing to complete it)", "Kind, patient and a good listener"],
    ),
    Family(
        "registered nurse",
        "care",
        ["registered nurse", "staff nurse", "rgn"],
        ["healthcare assistant", "dental nurse"],
        [
            "Assessing, planning and delivering patient care",
            "Giving medicines and keeping clinical notes",
            "Leading a small team of support staff on shift",
            "Caring for patients after surgery",
        ],
        ["Active nursing registration", "Preceptorship available for newly qualified applicants"],
    ),
    Family(
        "care assistant",
        "care",
        ["care assistant", "carer", "care worker", "home carer"],
        ["senior carer", "healthcare assistant"],
        [
            "Visiting clients at home to help with personal care",
            "Preparing meals and prompting medication",
            "Helping residents stay active and connected",
            "Writing up daily care notes",
        ],
        ["Driving licence and own car for community rounds", "Enhanced background check (we pay)"],
    ),
    Family(
        "senior carer",
        "care",
        ["senior carer", "senior care worker", "care supervisor"],
        ["care assistant"],
        [
            "Leading the care team on shift",
            "Administering medication and checking care plans",
            "Coaching new starters through their induction",
        ],
        ["At least a year in care", "Level 3 in health and social care, or working towards it"],
    ),
    Family(
        "dental nurse",
        "care",
        ["dental nurse", "dental assistant", "trainee dental nurse"],
        ["registered nurse", "receptionist"],
        [
            "Chairside support for the dentist",
            "Decontaminating and preparing instruments",
            "Keeping patient records up to date",
        ],
        ["Dental nursing qualification or enrolled on a course"],
    ),
    Family(
        "pharmacy assistant",
        "retail",
        ["pharmacy assistant", "dispensing assistant", "pharmacy advisor"],
        ["retail assistant"],
        [
            "Dispensing prescriptions under supervision",
            "Advising customers on over the counter medicines",
            "Receiving and checking deliveries",
        ],
        ["Pharmacy qualification or willingness to train"],
    ),
    Family(
        "retail assistant",
        "retail",
        ["retail assistant", "sales assistant", "shop assistant", "store colleague"],
        ["cashier", "pharmacy assistant"],
        [
            "Serving customers on the shop floor",
            "Filling shelves and rotating stock",
            "Keeping the store tidy and well presented",
            "Helping with deliveries and stock counts",
        ],
        ["Friendly and customer focused", "Happy to work weekends on a rota"],
    ),
    Family(
        "cashier",
        "retail",
        ["cashier", "checkout operator", "till operator"],
        ["retail assistant"],
        [
            "Running a till and handling cash and cards",
            "Checking age for restricted sales",
            "Cashing up at the end of a shift",
        ],
        ["Confident with numbers"],
    ),
    Family(
        "warehouse operative",
        "logistics",
        ["warehouse operative", "picker packer", "order picker", "warehouse worker"],
        ["forklift driver"],
        [
            "Picking and packing orders with a handheld scanner",
            "Loading and unloading vehicles",
            "Checking goods in and keeping the aisles clear",
            "Hitting pick rates safely",
        ],
        ["No experience needed, full training given", "Safety boots provided"],
    ),
    Family(
        "forklift driver",
        "logistics",
        ["forklift driver", "flt operator", "counterbalance operator"],
        ["warehouse operative"],
        [
            "Moving pallets around the yard and warehouse",
            "Loading trailers to the load plan",
            "Daily pre-use checks on the truck",
        ],
        ["Valid forklift licence (counterbalance)", "Reach truck licence an advantage"],
    ),
    Family(
        "hgv driver",
        "logistics",
        ["hgv driver", "lorry driver", "class 2 driver", "cat c driver"],
        ["van driver", "bus driver"],
        [
            "Multi-drop deliveries to shops across the bay",
            "Vehicle checks and tachograph records",
            "Handballing goods where needed",
        ],
        ["Category C licence and driver qualification card", "Clean licence, no more than 6 points"],
    ),
    Family(
        "van driver",
        "logistics",
        ["van driver", "delivery driver", "multi drop driver", "courier driver"],
        ["hgv driver"],
        [
            "Delivering parcels to homes and businesses",
            "Loading your van in route order",
            "Getting signatures on the handheld",
        ],
        ["Full manual licence held for 2 years"],
    ),
    Family(
        "bus driver",
        "logistics",
        ["bus driver", "pcv driver", "coach driver"],
        ["hgv driver"],
        [
            "Driving scheduled routes around the bay",
            "Helping passengers on and off safely",
            "Taking fares and checking passes",
        ],
        ["PCV licence, or we will train you"],
    ),
    Family(
        "chef",
        "hospitality",
        ["chef", "cook", "kitchen chef"],
        ["kitchen porter", "sous chef"],
        [
            "Cooking fresh food to our menu",
            "Prepping your section before service",
            "Keeping the kitchen clean and records up to date",
        ],
        ["Food hygiene level 2", "Fresh food experience"],
    ),
    Family(
        "sous chef",
        "hospitality",
        ["sous chef", "second chef"],
        ["chef"],
        ["Running the pass when the head chef is off", "Ordering and stock control", "Training junior kitchen staff"],
        ["Previous experience as a senior kitchen leader"],
    ),
    Family(
        "kitchen porter",
        "hospitality",
        ["kitchen porter", "kp", "pot washer", "kitchen assistant"],
        ["chef"],
        [
            "Washing pots, pans and dishes",
            "Keeping the kitchen floors and bins clean",
            "Helping the cooks with basic prep",
        ],
        ["No experience needed"],
    ),
    Family(
        "bar staff",
        "hospitality",
        ["bartender", "bar staff", "bar person", "barmaid"],
        ["waiter"],
        [
            "Pouring drinks and pulling pints",
            "Changing barrels and restocking the bar",
            "Checking ID for age restricted sales",
        ],
        ["Over 18", "Personal licence an advantage"],
        coded=["barmaid"],
    ),
    Family(
        "waiting staff",
        "hospitality",
        ["waiter", "waitress", "server", "waiting staff"],
        ["bartender"],
        [
            "Taking orders and serving tables",
            "Laying up and clearing down the restaurant",
            "Making guests feel welcome",
        ],
        ["Table service experience is a bonus"],
        coded=["waitress"],
    ),
    Family(
        "cleaner",
        "facilities",
        ["cleaner", "domestic assistant", "housekeeper", "cleaning operative"],
        ["caretaker"],
        [
            "Cleaning offices, wards or guest rooms to a checklist",
            "Emptying bins and restocking supplies",
            "Reporting any repairs needed",
        ],
        ["Reliable and thorough"],
    ),
    Family(
        "caretaker",
        "facilities",
        ["caretaker", "site caretaker", "handyman", "premises assistant"],
        ["cleaner", "maintenance technician"],
        ["Opening and locking up the site", "Small repairs and painting", "Keeping the grounds safe and tidy"],
        ["Practical and handy", "Enhanced background check"],
        coded=["handyman"],
    ),
    Family(
        "security officer",
        "facilities",
        ["security officer", "security guard", "door supervisor"],
        ["receptionist"],
        ["Patrolling the site and checking alarms", "Controlling access at the front gate", "Writing incident reports"],
        ["Valid security licence"],
    ),
    Family(
        "electrician",
        "trades",
        ["electrician", "sparky", "electrical fitter"],
        ["maintenance technician"],
        ["First and second fix on new homes", "Fault finding and testing", "Issuing certificates"],
        ["Level 3 electrical qualification", "Own hand tools"],
    ),
    Family(
        "maintenance technician",
        "trades",
        ["maintenance technician", "maintenance engineer", "multi skilled engineer"],
        ["electrician", "caretaker"],
        [
            "Planned maintenance on plant and machinery",
            "Reactive repairs across the site",
            "Keeping the maintenance log up to date",
        ],
        ["Electrical or mechanical qualification"],
    ),
    Family(
        "labourer",
        "trades",
        ["labourer", "general labourer", "groundworker", "site operative"],
        ["painter decorator"],
        [
            "Loading out materials and keeping the site clean",
            "Digging footings and laying drainage",
            "Helping the trades on site",
        ],
        ["Site safety card"],
    ),
    Family(
        "painter decorator",
        "trades",
        ["painter decorator", "decorator", "painter"],
        ["labourer"],
        [
            "Preparing and painting walls, ceilings and woodwork",
            "Hanging wallpaper",
            "Protecting floors and furniture",
        ],
        ["Own brushes and dust sheets"],
    ),
    Family(
        "vehicle technician",
        "trades",
        ["vehicle technician", "mechanic", "motor mechanic"],
        ["van driver"],
        ["Servicing and repairing cars and vans", "Diagnosing faults", "Road testing after repairs"],
        ["Level 3 in vehicle maintenance"],
    ),
    Family(
        "teaching assistant",
        "schools",
        ["teaching assistant", "ta", "learning support assistant", "classroom assistant"],
        ["early years practitioner"],
        [
            "Supporting small groups with reading and maths",
            "Working one to one with pupils with additional needs",
            "Helping with break and lunch duties",
        ],
        ["Enhanced background check", "Experience with children"],
    ),
    Family(
        "early years practitioner",
        "schools",
        ["early years practitioner", "nursery practitioner", "nursery nurse", "early years educator"],
        ["teaching assistant"],
        [
            "Planning play and learning for under fives",
            "Being a key person for a group of children",
            "Sharing observations with parents",
        ],
        ["Level 3 early years qualification", "Paediatric first aid"],
    ),
    Family(
        "receptionist",
        "office",
        ["receptionist", "front desk receptionist", "reception administrator"],
        ["admin assistant", "security officer"],
        [
            "Greeting visitors and answering the phone",
            "Booking appointments and rooms",
            "Handling post and deliveries",
        ],
        ["Warm and professional manner"],
    ),
    Family(
        "admin assistant",
        "office",
        ["admin assistant", "administrator", "office assistant", "clerical assistant"],
        ["receptionist", "bookkeeper"],
        ["Data entry and filing", "Answering emails and phone calls", "Preparing letters and reports"],
        ["Good with spreadsheets and email"],
    ),
    Family(
        "bookkeeper",
        "office",
        ["bookkeeper", "accounts assistant", "finance assistant"],
        ["admin assistant"],
        ["Processing invoices and bank reconciliations", "Running the payroll", "Chasing overdue payments"],
        ["Bookkeeping qualification or experience"],
    ),
    Family(
        "customer service advisor",
        "office",
        ["customer service advisor", "call centre agent", "contact centre advisor"],
        ["receptionist"],
        ["Answering inbound calls and chats", "Resolving customer queries first time", "Logging every contact"],
        ["Clear telephone manner"],
    ),
]

# How a posting names another title of its family in passing: never a sentence listing names.
PASSING = [
    "Experience as a {other} would be great but is not essential.",
    "You might be working as a {other} right now, and that is fine with us.",
    "Our {other} colleagues will show you the ropes in your first week.",
    "Many of our team started out as a {other}.",
]

# Every employer's own "about us", pasted verbatim into each of its postings.
ABOUT = {
    "Oxmere Bay Hospital": (
        "Oxmere Bay Hospital is the main hospital for the bay, with 420 beds, a busy emergency department and"
        " a strong teaching culture. We invest in our people and are proud of our friendly wards."
    ),
    "Brackenholt Lodge Care": (
        "Brackenholt Lodge Care runs three residential homes near the harbour. Our residents come first, and "
        "our staff are the reason families choose us."
    ),
    "Pellmire Community Care": (
        "Pellmire Community Care supports people to live well in their own homes across the bay. We pay "
        "mileage, offer guaranteed hours and give every new starter a buddy."
    ),
    "Quillwick Smile Dental": (
        "Quillwick Smile Dental is a family run practice with five surgeries, open late on Thursdays."
    ),
    "Marlstow Market Stores": (
        "Marlstow Market Stores has served the bay since the harbour first opened. We have stores in every "
        "town and a staff discount from day one."
    ),
    "Dunnock Pharmacy Group": "Dunnock Pharmacy Group runs eleven community pharmacies along the coast road.",
    "Orrinsby Home Goods": (
        "Orrinsby Home Goods sells furniture, bedding and everything for the home from our large store on the"
        " ring road."
    ),
    "Fennick Cross Logistics": (
        "Fennick Cross Logistics runs the distribution centre for the bay's shops, open 24/7, 364 days a year."
    ),
    "Oxmere Port Haulage": (
        "Oxmere Port Haulage moves containers from the port to customers across the region with a modern fleet."
    ),
    "Bay Coaches Oxmere": "Bay Coaches Oxmere runs the town bus network and school contracts around the bay.",
    "The Gull & Anchor Oxmere": "The Gull & Anchor is a busy harbourside pub with rooms, serving food all day.",
    "Brackenholt Harbour Hotel": (
        "Brackenholt Harbour Hotel has 60 bedrooms, a restaurant and a wedding venue overlooking the water."
    ),
    "Pellmire Pier Kitchen": "Pellmire Pier Kitchen is a seafood restaurant at the end of the pier, busiest in summer.",
    "Quillwick Facility Services": (
        "Quillwick Facility Services cleans and looks after offices, schools and clinics around the bay."
    ),
    "Orrinsby Borough Estates": (
        "Orrinsby Borough Estates looks after the borough's schools, libraries and community buildings."
    ),
    "Marlstow Guarding": "Marlstow Guarding provides security for shops, building sites and events.",
    "Oxmere Bay Building": "Oxmere Bay Building builds new homes and extensions around the bay.",
    "Fennick Cross Electrical": (
        "Fennick Cross Electrical is a domestic and commercial electrical contractor with twenty vans on the road."
    ),
    "Dunnock Ferry Motors": (
        "Dunnock Ferry Motors is an independent garage servicing cars and light commercial vehicles."
    ),
    "Pellmire Bay School": "Pellmire Bay School is a primary school of 400 pupils with a specialist resource base.",
    "Quillwick Little Acorns Nursery": (
        "Little Acorns is an outstanding rated day nursery for children from three months to five years."
    ),
    "Orrinsby Learning Trust": (
        "Orrinsby Learning Trust runs four schools across the bay and shares staff between them."
    ),
    "Oxmere Bay Council": "Oxmere Bay Council delivers services to 90,000 residents and offers flexible working.",
    "Marlstow Mutual Contact Centre": (
        "Marlstow Mutual is a members' mutual and runs its contact centre from the Marlstow business park."
    ),
    "Brackenholt Accounts Bureau": (
        "Brackenholt Accounts Bureau looks after the books of small businesses around the bay."
    ),
}

# Agencies paste a paragraph naming every town they cover, whatever the posting's own town.
AGENCY_ABOUT = (
    "{agency} is a recruitment agency covering Oxmere, Brackenholt, Pellmire, Quillwick, Orrinsby, Fennick Cross, "
    "Marlstow and Dunnock Ferry. We are acting as an employment business in relation to this vacancy. "
    "Register with us today for more jobs near you."
)

# How this board spells each shift pattern (the first is the pattern's own name).
PATTERN_SPELLINGS = {
    "part time": ["part time", "part-time", "p/t", "pt"],
    "full time": ["full time", "full-time", "f/t"],
    "temporary": ["temporary", "temp", "temp to perm"],
    "nights": ["nights", "night shift", "night shifts", "waking nights"],
    "weekends": ["weekends", "weekend", "weekend only"],
}
