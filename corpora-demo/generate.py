#!/usr/bin/env python3
"""Build the invented demo corpus for themata: back issues of the Kestlewick Crier.

Kestlewick is a made-up coastal town and the Crier is its made-up community
bulletin. Every sentence below was written by hand for this project; none of
it comes from a real town, a real newspaper or an existing data set.

Each document is one bulletin item: a short title followed by 5 to 12
sentences, about three quarters from its main theme, one or two from a
second theme and the rest from the shared bulletin filler. Placeholders such
as {day} or {fish} are filled from small lists, and [a|b] picks one of the
listed alternatives, so repeated sentences do not read identically.

The only source of randomness is random.Random(FIXED_SEED), so running

    python3 corpora-demo/generate.py

always rewrites corpora-demo/bulletin.jsonl byte for byte the same.
Standard library only.
"""

import json
import random
import re
from pathlib import Path

FIXED_SEED = 20240617
# Issue 1 came out on the first of January of this year; one issue a month.
FIRST_YEAR = 2016
DOCUMENTS_PER_THEME = 50
ITEMS_PER_ISSUE = 5
OUTPUT_PATH = Path(__file__).resolve().parent / "bulletin.jsonl"

MONTHS = [
    "January", "February", "March", "April", "May", "June", "July",
    "August", "September", "October", "November", "December",
]

# Slot values shared by every theme.
SHARED_SLOTS = {
    "day": ["Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday"],
    "month": MONTHS,
    "money": ["240", "385", "612", "870", "1,150", "1,430"],
    "phone": ["01632 448 210", "01632 448 377", "01632 451 090"],
    "email": ["news@kestlewick-crier.example", "editor@kestlewick-crier.example"],
}

# ---------------------------------------------------------------------------
# Theme banks: label -> titles, sentences and theme-only slot values.
# ---------------------------------------------------------------------------

THEMES = {}

THEMES["harbour"] = {
    "titles": [
        "Harbour notes for {issue_month}.",
        "News from Gullstone Quay.",
        "The fishing report.",
        "From the harbour office.",
        "Boats, tides and catches.",
        "Down on the fish quay.",
    ],
    "slots": {
        "boat": ["Morrow Belle", "Little Tern", "Gannet's Wake", "Silver Dory", "Brave Hester"],
        "fish": ["mackerel", "pollock", "whiting", "sprats", "gurnard", "hake"],
    },
    "sentences": [
        "The trawler {boat} came back to Gullstone Quay on {day} with a hold full of {fish}.",
        "Harbourmaster Dunstan Pellow reminds skippers that the inner basin dries out at low tide, so moorings must be checked before the spring tides.",
        "The net lofts along the quay are open again, and old hands will show anyone how to mend a torn trawl net.",
        "Prices for {fish} at the fish market held steady this month, although the catch was smaller than last year.",
        "Skipper Mairead Tolley says the {fish} shoals arrived early and the handline boats have had their best week in years.",
        "A new crane has been fitted on the north pier to lift lobster pots and fish boxes onto the quay.",
        "The slipway will be closed for two tides while divers inspect the harbour wall beneath the waterline.",
        "Crab pots left stacked on the quayside must carry the owner's tag, or the harbour office will remove them.",
        "The lifeboat crew practised a tow with the {boat} off Blackrock Point and thank her skipper for playing the stricken vessel.",
        "Fishermen are asked to log every landing with the harbour office so the quota figures stay accurate.",
        "The ice plant behind the fish market is working again after the compressor was replaced.",
        "Young deckhands can sign up for the winter course on knots, winches, engines and safety at sea.",
        "Anyone mooring a dinghy in the outer harbour should use the visitor buoys marked in yellow.",
        "The {boat} has been hauled out on the hard for a fresh coat of antifouling and a new propeller shaft.",
        "Herring gulls around the fish quay are a nuisance, so please keep bait boxes closed and put gut waste in the bins.",
        "Ewan Scarrow landed a huge conger eel in his lobster pots, the largest seen in the harbour this decade.",
        "Tide tables for next season are available from the harbour office for a small donation to the fishermen's mission.",
        "The harbour dredger will work the channel for a week, so keep clear of her anchor cables and the spoil barge.",
        "Smoked {fish} from the smokehouse on Gullstone Quay sold out within an hour at the [Saturday|weekend] stall.",
        "Diesel at the harbour pontoon is cheaper for registered fishing vessels, and the fuel tank was refilled on {day}.",
        "The old fish cellars are being turned into a small museum of sails, nets, oars and the pilchard trade.",
        "A seal has taken to sleeping on the pontoon beside the trawlers, and skippers are asked not to disturb her.",
        "The fishermen's cooperative will vote on buying a second refrigerated van to carry the catch inland.",
        "Boats heading out past the harbour mouth should watch for the sandbar, which has shifted after the last big swell.",
        "Net mender Bryony Quaile and her brother spent three days repairing the seine nets of the {boat}.",
        "The harbour office now sells permits for sea anglers who want to fish from the end of the breakwater.",
        "Scallop dredging in the bay opens on the first of {month}, with the usual limits on size and landing days.",
        "Lobsters below the minimum size must go back over the side, and the fishery officer will be measuring on the quay.",
        "The mooring chains in the inner harbour were lifted and checked, and six rusted shackles were replaced.",
        "A trawler skipper from Wherrington praised the harbour crew for a quick berth when his engine failed off the point.",
        "The quay ladders have new rungs so crews can climb down to their boats at any state of the tide.",
        "Old ropes, floats and broken creels can be left in the skip by the net loft for recycling.",
        "Boat owners have until {day} to pay harbour dues for the coming year at the reduced rate.",
        "The cockle beds on the estuary will stay closed until the shellfish samples come back clean.",
        "Skipper Mairead Tolley is looking for a deckhand who can gut {fish}, stack fish boxes and stand a night watch.",
    ],
}

THEMES["school"] = {
    "titles": [
        "School news for {issue_month}.",
        "From the classroom.",
        "Kestlewick Primary update.",
        "Harnby Academy notes.",
        "Term time news.",
        "Pupils and teachers.",
    ],
    "slots": {
        "year_group": ["year three", "year four", "year five", "year six"],
    },
    "sentences": [
        "Pupils at Kestlewick Primary will start the new term on {day}, and uniforms can be ordered from the school office.",
        "Head teacher Ottilie Brennard thanks parents who helped repaint the classrooms over the holidays.",
        "The {year_group} pupils presented their science projects on magnets, volcanoes and electric circuits to a packed school hall.",
        "The school kitchen now serves a hot breakfast before lessons start, free for every child who wants one.",
        "Homework club runs in the maths classroom after school on {day} with help from older students.",
        "Harnby Academy students sitting exams this summer can collect revision timetables from their form tutor.",
        "The parent teacher association raised {money} pounds at the sponsored spelling test for new playground equipment.",
        "Mr Caspar Lunt's class has been learning fractions by measuring flour and dividing pies between pupils.",
        "Applications for reception places for children starting school next September must be made before the end of {month}.",
        "The school recorder group and the {year_group} singers will perform at the end of term assembly.",
        "Teachers will hold parents' evening in the school hall, with ten-minute appointments booked through the school office.",
        "Pupils on the eco committee planted a hedge along the playground fence and are measuring how fast it grows.",
        "A new teaching assistant, Wenna Hollick, joins the infant class and will support pupils with phonics and handwriting.",
        "The school minibus will take the geography class to study rock pools and coastal erosion on a field trip.",
        "Children who have lost jumpers, lunchboxes or water bottles should check the lost property box by the staff room.",
        "Students at Harnby Academy won the county debating final, arguing that homework should be abolished.",
        "Inspectors visited the primary school this term and praised the pupils' behaviour and the quality of teaching.",
        "The school gates open at half past eight, and parents are asked not to wait on the zigzag lines.",
        "Sixth form students are volunteering as mentors for younger pupils who find maths lessons difficult.",
        "A chess club for pupils of all ages meets at lunchtime in the art room, with boards donated by the governors.",
        "The school governors are looking for a new governor with experience of finance or special educational needs.",
        "Pupils in {year_group} built model castles from cardboard for their history project on the Normans.",
        "Class teachers report that pupil attendance this term is the highest the school has recorded.",
        "Harnby Academy is hiring a part-time science technician to prepare experiments in the laboratories.",
        "Nursery children visited the classroom next door to meet their future teacher before moving up.",
        "The head teacher reminds families that term dates for next year are pinned to the school noticeboard.",
        "Pupils are learning French with a new teacher, and every class now answers the register in French.",
        "The school council, elected by the pupils, asked for more benches and a quiet corner in the playground.",
        "Exam results at Harnby Academy improved again, with most students passing English and maths.",
        "A retired teacher, Gideon Sallow, offers free tutoring in algebra and geometry for students preparing for exams.",
        "School photographs will be taken on {day}, so please send children in clean uniform.",
        "The breakfast club and after-school childcare now have places for a few more pupils.",
        "Pupils in {year_group} wrote letters to pen pals at a school across the estuary and are waiting eagerly for replies.",
        "The times tables challenge raised money for new classroom tablets and a set of science kits.",
        "Mr Caspar Lunt reminds pupils that spelling tests are every {day}, so practise the weekly word list at home.",
    ],
}

THEMES["garden"] = {
    "titles": [
        "Allotment news for {issue_month}.",
        "On the plots.",
        "Windle Lane allotments.",
        "The gardening page.",
        "Seeds, soil and harvests.",
        "From the allotment hut.",
    ],
    "slots": {
        "veg": ["carrots", "parsnips", "beetroot", "leeks", "spinach", "radishes"],
    },
    "sentences": [
        "The Windle Lane allotments have several vacant plots, and the waiting list for new plot holders is shorter than last year.",
        "Allotment secretary Hester Moy reminds plot holders that hedges must be trimmed and grass paths kept mown.",
        "Potatoes planted early on the lower terraces escaped the blight, and the crop of {veg} is looking strong.",
        "The seed swap in the allotment hut brought out dozens of packets of beans, peas and heritage tomatoes.",
        "Rollo Penhale won the prize for the heaviest marrow at the horticultural show, beating his rival by half a pound.",
        "Slugs and snails have been feasting on lettuce seedlings, so gardeners are sharing tips on beer traps and copper tape.",
        "A load of well-rotted horse manure will be tipped by the gate, free to any gardener who brings a wheelbarrow.",
        "The community orchard on Thrush Common needs help to prune the apple and pear trees this winter.",
        "Compost bins made from old pallets are available from the allotment committee for a small charge.",
        "Runner beans climbing the canes along the top path have already reached the height of the shed roof.",
        "Water butts should be filled from the shed gutters, as the standpipes on the allotments are turned off in winter.",
        "The gardening club will hear a talk on growing fruit under glass, with cuttings of fig and grapevine to take home.",
        "Plot holders are asked not to burn weeds or hedge clippings, which belong in the green waste skip instead.",
        "Rhubarb crowns, raspberry canes and strawberry runners are being given away by a retiring plot holder.",
        "The polytunnel at the far end of the site has been re-covered and will be used to raise {veg} seedlings for the community plot.",
        "Rabbits have dug under the fence again, so the committee is buying taller netting to protect the brassicas.",
        "Bees from the allotment hives produced a record harvest of honey, sold at the gate in small jars.",
        "Gardeners who grow dahlias and sweet peas are invited to bring cut flowers for the show bench in {month}.",
        "Onion sets, garlic bulbs and broad bean seed can be bought from the trading hut on {day} mornings.",
        "A hedgehog house has been built beside the wildlife pond, so please check long grass before strimming.",
        "The front garden competition will be judged in early summer, with prizes for hanging baskets and window boxes.",
        "Blackfly have smothered the broad beans, and organic growers recommend a spray of soapy water.",
        "Hester Moy's tip for the month: sow {veg} thinly in drills, and thin the seedlings once they have two true leaves.",
        "The allotment hut has a new kettle, a new padlock and a shelf of seed catalogues.",
        "Tools stolen from two sheds have been replaced by fellow gardeners, and the gate padlock code has been changed.",
        "A courgette glut means plot holders are leaving spare courgettes on the table by the gate for anyone to take.",
        "Mulch your fruit bushes with leaf mould and straw to keep the soil moist and the weeds down.",
        "The horticultural society will run a pruning workshop on roses, currants and gooseberries.",
        "Neglected plots will be inspected in {month}, and tenants who have not cultivated the ground may lose their tenancy.",
        "The wildflower strip sown along the allotment boundary is buzzing with butterflies, hoverflies and bumblebees.",
        "Green manure such as clover or mustard can be dug into empty beds to feed the soil over winter.",
        "Seed potatoes are chitting on windowsills all over town, and the allotment shop has six varieties in stock.",
        "Rollo Penhale has offered his rotavator to any new tenant who needs help breaking up heavy clay.",
        "With blight about, remove affected tomato leaves and do not add them to the compost heap.",
        "Earth up your leeks, net your cabbages against pigeons and keep hoeing between the rows of {veg}.",
    ],
}

THEMES["transport"] = {
    "titles": [
        "Roads and buses.",
        "Travel news for {issue_month}.",
        "Getting about town.",
        "Bus and road update.",
        "On the move.",
        "Traffic and timetables.",
    ],
    "slots": {
        "route": ["7", "12", "14", "22"],
    },
    "sentences": [
        "The number {route} bus to Pendlecombe will run every half hour from {day}, with an extra late service at weekends.",
        "Roadworks on Harnby Road will close one lane while the water main is replaced, so expect temporary traffic lights.",
        "Potholes on Marrow Hill have been filled at last after months of complaints from cyclists and motorists.",
        "The bus shelter on Pellow Street has a new display showing when the next bus is due.",
        "Drivers are reminded that the speed limit is twenty miles per hour along the high street.",
        "Ridgeline Coaches will replace two old buses with electric buses that have space for wheelchairs and buggies.",
        "Bus driver Owain Beck retires after thirty years behind the wheel of the route {route} service.",
        "The level crossing near the station will be closed overnight for rail repairs, with a diversion signed via Cobble Bridge.",
        "Concessionary bus passes for pensioners can now be renewed online or at the post office counter.",
        "Highways officer Tamsin Garrow says new road markings and a pedestrian crossing will be painted by the end of {month}.",
        "Parking in the market square is limited to two hours, and traffic wardens will ticket cars that overstay.",
        "The town's first electric car charging points have been installed in the car park behind the railway station.",
        "A petition for a zebra crossing outside the post office has been signed by hundreds of pedestrians.",
        "Commuters catching the early train complain that the connecting bus often leaves before passengers reach the stop.",
        "Gritting lorries will treat the main roads and bus routes first, then the steep side streets.",
        "Residents can see the proposed route of the bypass on a display in the railway station booking hall.",
        "Cyclists welcome the new cycle lane along the estuary road, though some say the kerbs are too high.",
        "Taxi drivers have asked for a taxi rank outside the station so they can wait without blocking the buses.",
        "The bus timetable changes on {day}, and printed timetables are available from drivers and the ticket office.",
        "Lorries heading for the quarry must now use the ring road instead of squeezing through the narrow high street.",
        "A dial-a-ride minibus with volunteer drivers takes older residents to the supermarket and back each week.",
        "Temporary traffic lights on Cobble Bridge caused queues of cars stretching back to the roundabout.",
        "Motorists are asked not to park on the pavement, which forces pedestrians with pushchairs into the road.",
        "Fares on the route {route} bus will stay at the same price for another year, the operator confirmed.",
        "The station car park will be resurfaced and relined, with extra spaces for motorcycles and bicycles.",
        "Speed cameras on the coast road caught dozens of drivers in the first month, most of them doing over forty.",
        "The footbridge over the railway line is closed for repainting, with a detour through the underpass.",
        "Passengers are asked to let people off the bus before boarding and to tap their ticket or pass on the reader.",
        "A new roundabout at the junction with the Pendlecombe road should cut the number of crashes seen there.",
        "The night bus from the city will stop at the station and the market square until two in the morning.",
        "Road closures for resurfacing will move along the high street in stages, with diversions for cars and buses.",
        "Learner drivers practising hill starts on Marrow Hill are asked to avoid the morning rush hour.",
        "Bus passengers can now follow their bus on a phone app and see delays before leaving home.",
        "Tamsin Garrow has promised to replace the broken street lights and the faded road signs on the ring road.",
        "The railway operator will run a replacement bus service on {day} while engineers work on the signals.",
    ],
}

THEMES["library"] = {
    "titles": [
        "Library corner.",
        "News from Lantern Street Library.",
        "Books and readers.",
        "The library page for {issue_month}.",
        "On the shelves.",
        "Reading matters.",
    ],
    "slots": {
        "book": [
            "The Salt Cartographer",
            "A Lamp for Odile",
            "The Glassblower's Daughter",
            "Letters from Quennock",
            "The Ferryman's Almanac",
        ],
    },
    "sentences": [
        "Lantern Street Library has extended its opening hours and now stays open until seven on {day} evenings.",
        "Librarian Perpetua Hask has ordered new novels, poetry collections and large print books after requests from readers.",
        "The reading group will discuss {book} this month, and spare copies are behind the lending desk.",
        "Overdue fines have been abolished, so borrowers can bring back long lost books without paying a penny.",
        "Story time for toddlers runs in the children's corner of the library, with picture books, rhymes and songs.",
        "The library has a fresh batch of audiobooks and ebooks that members can borrow with their library card.",
        "A local history collection of old maps, parish records and photographs can now be viewed in the reading room.",
        "Volunteer Linus Ormerod runs a weekly session helping people use the public computers, printers and scanners.",
        "The summer reading challenge asks children to read six books over the holidays and collect a sticker for each one.",
        "A second-hand book sale in the library foyer raised {money} pounds for new shelving in the reference section.",
        "The poetry evening featured readings from three local poets and a short talk on writing verse.",
        "Members can now reserve books from other branches online and collect them from the lending desk.",
        "The writers' circle meets in the library study room to share short stories, memoirs and chapters of novels.",
        "Perpetua Hask recommends {book} as the best novel she has read this year.",
        "Dictionaries, atlases and encyclopedias in the reference section are for use in the library only.",
        "The mobile library van visits the outlying hamlets every fortnight, carrying paperbacks, jigsaws and audiobooks.",
        "A talk by the author of {book} drew a full house, and signed copies of the novel sold out.",
        "Readers are asked to use the returns box when the library is closed rather than leaving books on the step.",
        "The knit and natter afternoon in the library offers tea and a chapter of a novel read aloud.",
        "Teenagers have started a graphic novel club and have chosen twenty comics and manga titles for the shelves.",
        "New members can join the library by showing proof of address, and the library card is free for all ages.",
        "Bound volumes of old parish magazines can be read on request in the local studies room.",
        "Linus Ormerod has catalogued a donation of antique books on navigation, botany and folklore.",
        "Book lovers can suggest titles for the library to buy on the request slips at the lending desk.",
        "The library will be closed for a week while the carpets are replaced and the shelves rearranged by genre.",
        "A bilingual story session reads picture books in English and Polish, with crafts afterwards.",
        "Crime fiction, romance and science fiction remain the most borrowed genres, according to the annual loans report.",
        "The home library service delivers books to housebound readers, and helpers are needed to choose and drop off titles.",
        "A quiet reading room with desks and free wifi is available for anyone who needs peace to read or write.",
        "Perpetua Hask thanks the anonymous donor who paid for a new set of large print classics.",
        "The library poetry competition asks for poems of no more than twenty lines on the theme of home.",
        "Old paperbacks with broken spines have been withdrawn from the shelves and will be sold for ten pence each.",
        "Family historians can search census returns and parish registers on the library computers free of charge.",
        "Children who finish the reading challenge will receive a certificate and a bookmark at the library party.",
        "The book of the month on the display by the lending desk is {book}, and there is a waiting list for it.",
    ],
}

THEMES["clinic"] = {
    "titles": [
        "Health centre news.",
        "From the surgery.",
        "Your health in {issue_month}.",
        "Clinic notes.",
        "Doctors, nurses and pharmacy.",
        "Keeping well.",
    ],
    "slots": {},
    "sentences": [
        "The health centre on Mill Street will run a flu vaccination clinic on {day} for patients over sixty-five.",
        "Dr Imogen Farrant reminds patients that appointments can be booked by phone from eight in the morning.",
        "Practice nurse Bethan Crewe holds a blood pressure clinic every {day}, no appointment needed.",
        "The pharmacy next to the surgery now has repeat prescriptions ready for collection within two days.",
        "A diabetes support group meets at the health centre to share advice on diet, insulin and foot care.",
        "Patients who cannot attend an appointment are asked to cancel it, as too many appointments were missed last month.",
        "Pharmacist Rafferty Lusk can advise on coughs, colds, rashes and minor ailments without a visit to the doctor.",
        "The dental practice is taking on new patients, including children for check-ups and fillings.",
        "Midwives run an antenatal class for expectant parents in the clinic meeting room.",
        "A physiotherapist now visits the surgery twice a week to treat back pain, sprains and stiff joints.",
        "The out-of-hours doctor service can be reached by phone whenever the surgery is closed.",
        "Dr Farrant encourages patients to ask about the free health check covering cholesterol, weight and heart health.",
        "The blood donor session at the health centre was fully booked, and new donors are always welcome.",
        "Hearing tests and eye tests are offered at the optician's, with free glasses for children.",
        "The surgery's new phone system lets patients hold their place in the queue and receive a call back from reception.",
        "A mental health nurse now offers confidential sessions for anxiety, low mood and stress.",
        "Pneumonia and shingles vaccines are available for older patients, so ask at reception when you collect prescriptions.",
        "The surgery waiting room has been refurbished, with a screen that calls patients by name.",
        "Carers looking after a relative with dementia can get advice and respite through the memory clinic.",
        "The district nurse team visits housebound patients to dress wounds, give injections and check medication.",
        "The health centre's patient group wants more members to give feedback on how the surgery is run.",
        "Stop-smoking sessions with a trained adviser and free nicotine patches start again in {month}.",
        "Parents are reminded that baby immunisations are due at eight, twelve and sixteen weeks.",
        "The surgery will be closed on {day} afternoon for staff training, with emergency cover from the hospital.",
        "A new doctor, Dr Kwame Ashby, joins the practice and will lead the clinics for asthma and lung conditions.",
        "Patients can order repeat medicines through the pharmacy and have them delivered to their door.",
        "The first aid course in the clinic meeting room teaches resuscitation, bandaging and what to do when someone chokes.",
        "Cervical screening and breast screening appointments can be booked with the practice nurse.",
        "The minor injuries unit at the cottage hospital treats cuts, burns and broken bones without a long wait.",
        "Nurse Bethan Crewe's advice this month: wash your hands often, drink plenty of fluids and rest if you have a fever.",
        "The chiropodist will hold foot care appointments at the health centre on alternate {day}s.",
        "A gentle exercise group for patients recovering from heart surgery meets at the health centre each week.",
        "Prescription charges have risen, but patients with a medical exemption certificate still get their medicines free.",
        "The hospital in Pendlecombe has moved its outpatient clinics, so check your appointment letter for the new ward.",
        "Dr Kwame Ashby reminds patients with asthma to bring their inhalers to their annual review with the nurse.",
    ],
}

THEMES["sport"] = {
    "titles": [
        "Sports round-up.",
        "Results and fixtures.",
        "Club news for {issue_month}.",
        "From the touchline.",
        "Kestlewick Rovers report.",
        "Games, goals and wickets.",
    ],
    "slots": {
        "score": ["two goals to one", "three goals to nil", "four goals to two", "one goal to nil"],
    },
    "sentences": [
        "Kestlewick Rovers beat Sallowby Town by {score} on {day}, with a late header from captain Jory Tresize.",
        "The cricket club needs players for the second eleven, and indoor batting practice starts in the spring.",
        "The netball team finished top of the league after an unbeaten season, and Priya Fennimore was named coach of the year.",
        "New floodlights at the football ground mean training can continue on winter evenings.",
        "The bowling green has been rolled and reseeded, and the bowls club welcomes new members to roll up on {day} afternoons.",
        "Junior football training for under-nines and under-elevens runs on the recreation ground on Saturday mornings.",
        "The cricket pavilion has new changing rooms and showers, paid for by a grant and a sponsored match.",
        "Rovers goalkeeper Callum Dray saved two penalties in the cup match and was carried off the pitch by his teammates.",
        "The swimming pool at the leisure centre offers lessons for beginners, lane swimming and a Friday splash session.",
        "A fun run of five kilometres around the park raised {money} pounds for the club's new kit and footballs.",
        "The rugby club's first fifteen lost narrowly in the county semi-final after a try in the last minute.",
        "The darts and snooker league at the social club is looking for a fourth team to complete the fixtures.",
        "The tennis courts have been resurfaced, and the tennis club is running coaching sessions for players of all abilities.",
        "Our cricket captain scored a century against the touring side, his first hundred in twelve seasons.",
        "The referees' association is short of officials, so anyone interested in refereeing youth matches should come forward.",
        "Season tickets for Rovers home matches are on sale in the clubhouse, with discounts for juniors.",
        "The women's football team reached the league cup final and will play at the county ground in {month}.",
        "A badminton club meets in the leisure centre sports hall, with rackets and shuttlecocks provided.",
        "The athletics club's sprinters won four medals at the regional championships, including gold in the relay.",
        "The football pitch was waterlogged, so the league match against Crossway United was postponed.",
        "The bowls club's pairs team reached the national finals for the first time in the club's history.",
        "Rovers manager Dermot Haskins has signed two new strikers and a left back ahead of the new season.",
        "The golf club's open day gives beginners the chance to try putting and chipping on the practice green.",
        "Club members are asked to help mark out the pitch and put up the corner flags before the home fixture.",
        "The cricket tea rota is pinned up in the pavilion, and helpers are needed to make sandwiches for the players.",
        "The squash ladder has been updated, and the top four players will compete in the club championship.",
        "A new skate park on the recreation ground is popular with skateboarders and scooter riders.",
        "The junior cricket team won the under-thirteens trophy with a thrilling final over.",
        "The gym at the leisure centre has new rowing machines, treadmills and weights, with an induction for new members.",
        "Rovers supporters raised {money} pounds towards a new scoreboard and a roof for the stand.",
        "Table tennis coaching for beginners starts at the scout hut, with tables and bats provided.",
        "The netball club is holding trials for girls aged eleven to sixteen who want to play competitive matches.",
        "The annual cross-country race crosses fields, stiles and streams and finishes at the cricket ground.",
        "Player of the season awards went to the goalkeeper, the top scorer and a tireless midfielder.",
        "Rovers drew with Crossway United on {day}, and Dermot Haskins says the defence has never played better.",
    ],
}

THEMES["council"] = {
    "titles": [
        "Town council report.",
        "From the town hall.",
        "Council matters for {issue_month}.",
        "Planning and budget.",
        "Notes from the council chamber.",
        "Your town council.",
    ],
    "slots": {
        "percent": ["two", "three", "four", "five"],
        "thousand": ["twelve", "forty", "ninety", "two hundred"],
    },
    "sentences": [
        "The town council approved its budget for next year, with the precept rising by {percent} percent.",
        "Town clerk Lavinia Strand says the minutes of every council meeting are published on the town hall noticeboard.",
        "A planning application to convert the old chapel into four flats will be decided by the planning committee in {month}.",
        "Councillor Humphrey Gadd proposed a motion to cut councillors' expenses, which was carried by seven votes to three.",
        "Residents can comment on the draft neighbourhood plan, which sets out where new housing may be built.",
        "The council has set aside money in its reserves for repairs to the war memorial and the town clock.",
        "Planning permission for a supermarket on the edge of town was refused on appeal after objections from residents.",
        "The finance committee reported that spending was within budget, apart from higher insurance and energy bills.",
        "Council tax bills will arrive in {month}, and residents on low incomes may be entitled to a reduction.",
        "A public meeting on the proposed housing estate drew a packed crowd to the council chamber.",
        "Councillors voted to grant a lease on the old fire station to a charity for a community workshop.",
        "The council's audit found the accounts in good order, and the auditor's report is available to inspect.",
        "Two councillors have resigned, leaving vacancies in the east ward that may be filled by co-option.",
        "The mayor, Councillor Humphrey Gadd, opened the refurbished town hall and thanked the builders.",
        "Planning officers have recommended approval of the extension to the care home, subject to conditions on drainage.",
        "The council is consulting on a new policy for grants to local groups, with a grant fund of {thousand} thousand pounds.",
        "Members of the public may speak for three minutes at the start of each council meeting on any item on the agenda.",
        "The district council has agreed to transfer ownership of the public toilets to the town council.",
        "Objections to the wind turbine application centred on noise, the view from the cliffs and the effect on property values.",
        "Lavinia Strand presented the quarterly accounts, showing a small surplus that will be added to reserves.",
        "The council's environment committee has declared a climate emergency and will publish an action plan.",
        "Plans for affordable homes on the former dairy site were approved, with a quarter of the houses for local families.",
        "Councillors debated whether to raise the precept to keep the public toilets and the tourist information office open.",
        "The council's annual report sets out how every pound of the budget was spent last year.",
        "A listed building consent application for new windows in the old customs house has been submitted.",
        "The council will hold its annual meeting in {month}, when the mayor and the committee chairs are elected.",
        "Building a fence or an extension may need planning permission, so check with the planning office first.",
        "The council has appointed a deputy clerk to help with grants, contracts and freedom of information requests.",
        "A vote of thanks was recorded for retiring councillor Marjorie Trethick after twenty years on the council.",
        "The council budget includes money for new benches, litter bins and floral displays in the town centre.",
        "The planning committee deferred a decision on the holiday lets application until councillors have made a site visit.",
        "Residents can view the agenda, committee reports and planning documents at the town hall on weekdays.",
        "The council borrowed {thousand} thousand pounds over twenty-five years to buy the former bank building.",
        "Councillors agreed to commission a survey of housing need before the next review of the local plan.",
        "The town clerk has published the register of councillors' interests, which any elector may inspect.",
    ],
}

THEMES["weather"] = {
    "titles": [
        "The weather diary.",
        "Weather for {issue_month}.",
        "Rain, wind and sunshine.",
        "From the Fennick Hill weather station.",
        "Storm watch.",
        "Skies over Kestlewick.",
    ],
    "slots": {
        "rainfall": ["64", "87", "112", "139", "158"],
    },
    "sentences": [
        "Ambrose Kittow's weather station on Fennick Hill recorded {rainfall} millimetres of rain this month, well above the average.",
        "The gale on {day} night brought gusts of nearly seventy miles an hour and tore slates from several roofs.",
        "A sharp frost in {month} left the thermometer at minus six, the coldest night recorded here for a decade.",
        "Thunderstorms rolled in from the west with hailstones the size of peas and a dramatic display of lightning.",
        "Sandbags are stored at the fire station for householders whose homes are at risk of flooding.",
        "Forecasters issued a yellow warning for heavy rain, and the stream at the foot of Fennick Hill burst its banks.",
        "After weeks without rain, the drought has left lawns brown and the reservoir at its lowest level in years.",
        "Snow fell overnight and drifted against the hedges, and by morning the hills were white under a clear blue sky.",
        "Ambrose Kittow notes that the barometer dropped sharply before the storm, a sign every old forecaster trusts.",
        "Sunshine hours this summer were the highest on record, and the hottest afternoon reached thirty-one degrees.",
        "A fierce whirlwind was seen spinning across the fields near the old windmill, lifting straw high into the air.",
        "Thick fog lingered for three days, with visibility down to a few metres on the hilltops.",
        "Clear gutters and drains of fallen leaves before the autumn storms arrive, or the downpours will overflow them.",
        "The storm that locals already call the Great Blow brought down trees, blocked lanes and caused power cuts for hundreds of homes.",
        "The rain gauge overflowed twice in one week, so Ambrose Kittow has bought a bigger one.",
        "A double rainbow arched over the town after a heavy shower, and many readers sent in pictures of it.",
        "Black ice on the pavements caused several nasty slips, so take care on frosty mornings.",
        "The wettest autumn in fifty years has left fields flooded and the river running high under the bridge.",
        "A heatwave warning advises everyone to stay out of the midday sun and keep curtains closed in the afternoon.",
        "A hailstorm dented car roofs and shredded umbrellas in a matter of minutes.",
        "The temperature swung from a mild fifteen degrees to a hard frost in just two days.",
        "Weather lore says a red sky at night means a fine day tomorrow, and this month the old saying held true.",
        "The long range forecast suggests a mild, damp winter with a chance of snow on high ground.",
        "Lightning struck the church spire during the thunderstorm, scorching the weathervane but causing no fire.",
        "Wind speeds on the headland are now measured with an anemometer donated to the weather station.",
        "Flood wardens will patrol the riverside streets whenever a flood alert is issued.",
        "The frost lifted for a few days of mild sunshine, though a bitter easterly wind soon returned.",
        "Humidity was high all week, the air felt close and heavy, and the thunder finally broke on {day} evening.",
        "This year's rainfall total has already passed the annual average, with two months still to go.",
        "Ambrose Kittow's monthly weather summary: mild, breezy and showery, with a few bright spells.",
        "Power cuts after the blizzard lasted more than a day in the hamlets, where the snowdrifts were deepest.",
        "Drizzle and low cloud hung over the hills for most of the month, and the sun barely broke through.",
        "Frozen pipes burst in several empty houses during the cold snap, so lag your pipes and know where the stopcock is.",
        "A waterspout was spotted off the headland, a rare sight that had weather watchers reaching for their cameras.",
        "Overnight temperatures stayed below freezing for a fortnight, the longest cold spell Ambrose Kittow has logged.",
    ],
}

THEMES["festival"] = {
    "titles": [
        "Midsummer Festival news.",
        "Arts and music.",
        "What's on at the festival.",
        "The festival diary for {issue_month}.",
        "Concerts, plays and exhibitions.",
        "Stage and studio.",
    ],
    "slots": {},
    "sentences": [
        "The Kestlewick Midsummer Festival returns in {month} with three days of music, theatre, dance and art.",
        "Festival director Juno Marchbank has booked a jazz quartet, a string orchestra and a ceilidh band for the main stage.",
        "Tickets for the opening concert go on sale on {day} at the box office in the old corn exchange.",
        "The town brass band will lead the lantern procession through the streets on the final night of the festival.",
        "Local painters are invited to submit watercolours, oils and prints for the festival art exhibition.",
        "A folk night at the Crooked Fiddle will feature fiddlers, accordion players and unaccompanied singers.",
        "The amateur dramatic society will stage a comedy in the corn exchange, with rehearsals twice a week.",
        "Sculptor Ravi Colquhoun will carve a giant wooden figure live in the square during the festival weekend.",
        "Buskers, street performers and jugglers are welcome, and a pitch can be booked with the festival office.",
        "The open mic session gives young musicians and songwriters a chance to perform their own songs.",
        "The community choir is rehearsing a new piece composed especially for the festival by Juno Marchbank.",
        "A pottery workshop lets visitors throw a pot on the wheel and glaze it to take home.",
        "The festival craft fair will have stalls selling jewellery, ceramics, woven textiles and handmade prints.",
        "Stewards are needed to sell programmes, guide audiences and help the performers backstage.",
        "The film society will screen silent films with live piano accompaniment in the festival marquee.",
        "Dancers from the morris side will perform on the green, with bells, sticks and handkerchiefs.",
        "The festival photography competition has the theme of light and shadow.",
        "The festival's headline act, a soul singer with a ten-piece band, will perform on {day} evening.",
        "A mural painted by young artists now brightens the wall of the old corn exchange.",
        "The poetry slam in the marquee was loud, funny and moving, and the audience voted for the winner.",
        "Festival wristbands give entry to every concert, workshop and exhibition over the weekend.",
        "The puppet theatre will perform a show for families in the marquee each afternoon.",
        "The string quartet's recital of chamber music in the parish church was the highlight of the festival for many.",
        "Art trail maps show the open studios where painters, printmakers and potters welcome visitors.",
        "A drumming workshop for beginners ends with a samba band parade around the square.",
        "The festival committee thanks the sponsors who paid for the stage, the lighting rig and the sound system.",
        "Audition notices for the summer musical are up, with parts for singers, dancers and actors of all ages.",
        "The ukulele orchestra now has more than forty members and will play at the festival picnic.",
        "The festival raised enough from ticket sales to commission a new work from a young composer.",
        "An exhibition of textile art and embroidery fills the gallery above the corn exchange.",
        "The late-night cabaret in the marquee mixes magic, comedy, song and circus tricks.",
        "Children can make lanterns from willow and tissue paper in workshops before the procession.",
        "Jazz musicians from across the county played an improvised jam session until midnight.",
        "The festival programme, with the full list of concerts, plays and workshops, is available at the box office.",
        "Juno Marchbank says the festival audiences this year were the biggest since the first concert on the quayside green.",
    ],
}

# Sentences any bulletin item may carry: notices, thanks and contact lines.
FILLER_SENTENCES = [
    "Items for the next issue should reach the editor by {day} at noon.",
    "Many thanks to everyone who delivered this bulletin through letterboxes across town.",
    "For more information, ring the bulletin office on {phone}.",
    "Please tell your neighbours about this notice, especially those who do not get out much.",
    "Everyone is welcome, and there is no need to book in advance.",
    "Refreshments will be served, and donations on the day are gratefully received.",
    "Our thanks go to the volunteers who give up their time week after week.",
    "The editor apologises for an error in the last issue, which gave the wrong date.",
    "Further details are posted in the window of the post office.",
    "Letters to the editor are welcome, though we may shorten them to fit.",
    "If you would like to help, please leave your name at the bulletin office.",
    "The Crier is free and is paid for by advertisers and small donations from readers.",
    "Pictures for the Crier can be emailed to the editor at {email}.",
    "As always, we rely on readers to let us know what is happening in their corner of town.",
    "Do pass this copy of the Crier on when you have finished with it.",
    "We are grateful to the advertisers whose support keeps this bulletin going.",
    "The next issue will appear at the start of {month}.",
    "Any questions can be put to the organisers, who will be happy to help.",
    "An audio edition of the Crier is available for readers with poor sight.",
    "Thank you to the many readers who wrote in after the last issue.",
    "Please note the change of date, and spread the word.",
    "The organisers say all are welcome, young and old alike.",
    "Corrections and updates will be printed in the next issue.",
    "Our delivery team is looking for one more helper for the streets around the old mill.",
    "The bulletin office is open on weekday mornings above the old bakery on Cobble Row.",
    "A warm welcome to the families who have moved to Kestlewick this year.",
    "Do keep your news coming, because every item helps make this a better bulletin.",
    "Full details will follow in the next issue of the Crier.",
    "Please arrive a few minutes early to be sure of a seat.",
    "Donations of cakes and raffle prizes would be much appreciated.",
    "Watch this space for more news in the coming weeks.",
]

SLOT_PATTERN = re.compile(r"\{([a-z_]+)\}")
ALTERNATIVE_PATTERN = re.compile(r"\[([^\[\]]+)\]")


def fill_template(template, theme_slots, issue_month, rng):
    """Replace [a|b] alternatives and {slot} placeholders with concrete words."""
    text = ALTERNATIVE_PATTERN.sub(
        lambda match: rng.choice(match.group(1).split("|")), template
    )

    def pick_slot(match):
        name = match.group(1)
        if name == "issue_month":
            return issue_month
        if name in theme_slots:
            return rng.choice(theme_slots[name])
        if name in SHARED_SLOTS:
            return rng.choice(SHARED_SLOTS[name])
        raise KeyError(f"template uses unknown slot {{{name}}}: {template!r}")

    return SLOT_PATTERN.sub(pick_slot, text)


def sentence_counts(total_sentences):
    """Split a body length into (main, secondary, filler) sentence counts."""
    main = round(total_sentences * 0.75)
    secondary = max(1, round(total_sentences * 0.125))
    filler = total_sentences - main - secondary
    if filler < 0:
        main += filler
        filler = 0
    return main, secondary, filler


def build_document(main_theme, secondary_theme, issue_month, rng):
    """Write one bulletin item: a title, then shuffled body sentences."""
    main_bank = THEMES[main_theme]
    secondary_bank = THEMES[secondary_theme]
    total_sentences = rng.randint(5, 12)
    main_count, secondary_count, filler_count = sentence_counts(total_sentences)

    chosen = [
        (template, main_bank["slots"])
        for template in rng.sample(main_bank["sentences"], main_count)
    ]
    chosen += [
        (template, secondary_bank["slots"])
        for template in rng.sample(secondary_bank["sentences"], secondary_count)
    ]
    chosen += [(template, {}) for template in rng.sample(FILLER_SENTENCES, filler_count)]
    # Keep the body led by a main-theme sentence, shuffle the rest.
    head, tail = chosen[0], chosen[1:]
    rng.shuffle(tail)

    title = fill_template(rng.choice(main_bank["titles"]), main_bank["slots"], issue_month, rng)
    body = [fill_template(template, slots, issue_month, rng) for template, slots in [head] + tail]
    return " ".join([title] + body)


def check_banks():
    """Fail loudly if a bank is too small or repeats a sentence."""
    for label, bank in THEMES.items():
        sentences = bank["sentences"]
        if len(sentences) < 30:
            raise ValueError(f"theme {label!r} has only {len(sentences)} sentences; write at least 30")
        if len(set(sentences)) != len(sentences):
            raise ValueError(f"theme {label!r} repeats a sentence")
    if len(set(FILLER_SENTENCES)) != len(FILLER_SENTENCES):
        raise ValueError("filler bank repeats a sentence")


def generate():
    """Return the full corpus as a list of {"id", "date", "theme", "text"} records."""
    check_banks()
    rng = random.Random(FIXED_SEED)
    labels = list(THEMES)

    # Fifty rounds, each a fresh shuffle of all ten themes, so themes interleave.
    theme_sequence = []
    for _ in range(DOCUMENTS_PER_THEME):
        round_labels = labels[:]
        rng.shuffle(round_labels)
        theme_sequence.extend(round_labels)

    records = []
    for position, main_theme in enumerate(theme_sequence):
        issue_number = position // ITEMS_PER_ISSUE + 1
        item_number = position % ITEMS_PER_ISSUE + 1
        issue_month = MONTHS[(issue_number - 1) % 12]
        secondary_theme = rng.choice([label for label in labels if label != main_theme])
        records.append(
            {
                "id": f"issue-{issue_number:03d}/item-{item_number}",
                # The issue's date (ISO 8601), derived from its number alone so
                # that adding it drew nothing from the random stream.
                "date": f"{FIRST_YEAR + (issue_number - 1) // 12}-{(issue_number - 1) % 12 + 1:02d}-01",
                "theme": main_theme,
                "text": build_document(main_theme, secondary_theme, issue_month, rng),
            }
        )
    return records


def main():
    records = generate()
    with OUTPUT_PATH.open("w", encoding="utf-8", newline="\n") as output:
        for record in records:
            output.write(json.dumps(record, ensure_ascii=False) + "\n")
    total_words = sum(len(record["text"].split()) for record in records)
    theme_count = len({record["theme"] for record in records})
    print(
        f"wrote {OUTPUT_PATH.name}: {len(records)} documents, "
        f"{theme_count} themes, {total_words} words"
    )


if __name__ == "__main__":
    main()
