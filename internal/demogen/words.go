package main

// pool is a list of fillers for one slot. The test split draws from testOnly
// (when it is not empty) with probability testOnlyRate, so that those words
// never appear in the training split.
type pool struct {
	train    []string
	testOnly []string
}

// Everything below is invented for the demo: the company, its ports, ships,
// staff and customers.
var pools = map[string]pool{
	"port": {
		train: []string{"Brindlewick", "Aldholm", "Kestry", "Morrow Bay", "Fennick Harbour", "Saltrey",
			"Orlan Point", "Hobbs Quay", "Carrowmere", "Wrenhaven", "Tansey Pier", "Gallowend"},
		testOnly: []string{"Eastermoss", "Pennyvale", "Starling Reach", "Tullow Ness"},
	},
	"ship": {
		train: []string{"Marram Star", "Kestry Lass", "Silver Petrel", "Brindle Rose", "Halcyon Tide",
			"Orla Wren", "Tansey Queen", "Sealark", "Morrow Maid", "Saltrey Belle"},
		testOnly: []string{"Moonwort", "Amber Skerry", "Greylag Dawn"},
	},
	"staff": {
		train: []string{"Morag", "Tobias", "Anwen", "Fergus", "Priya", "Oskar", "Ilse", "Dev", "Kerensa",
			"Ruaridh", "Bronagh", "Callum", "Niamh", "Hamish", "Ewa", "Tomasz", "Gwen", "Idris"},
		testOnly: []string{"Ottoline", "Lachlan", "Zofia", "Berit"},
	},
	"cname": {
		train: []string{"Jo", "Sam Pryce", "Alison", "Mr Tregear", "Linda M", "Raj", "Heather", "Tom and Sue",
			"Mrs Quayle", "Pete", "Dr Hallam", "Fiona", "Gareth", "Mel", "K. Odell", "Ben", "Rosie", "Ahmed",
			"Carys", "Derek Foss", "Nell", "Marta", "the Pennock family", "Iain"},
		testOnly: []string{"Wilhelmina", "Ezekiel", "the Trevanion family"},
	},
	"item": {
		train: []string{"phone", "wallet", "purse", "rucksack", "umbrella", "pair of reading glasses", "pair of sunglasses",
			"set of car keys", "teddy bear", "scarf", "camera", "laptop", "phone charger", "e-reader", "woolly hat",
			"rain jacket", "coat", "walking stick", "dog lead", "passport", "pair of headphones", "water bottle",
			"pair of gloves", "shoe", "hearing aid", "bag of shopping", "toy rabbit", "handbag", "set of house keys", "watch"},
		testOnly: []string{"pair of binoculars", "ukulele", "thermos flask", "tripod", "knitting bag", "harmonica",
			"sketchbook", "fishing rod"},
	},
	"colour": {
		train:    []string{"black", "blue", "red", "green", "grey", "brown", "pink", "yellow", "navy", "white"},
		testOnly: []string{"turquoise", "maroon"},
	},
	"vehicle": {
		train:    []string{"a car", "a van", "a bike", "a car and trailer", "a motorbike", "a small van"},
		testOnly: []string{"a campervan", "a horsebox", "a tandem"},
	},
	"event": {
		train:    []string{"Kestry Regatta", "Saltrey Show", "Aldholm Folk Festival", "Morrow Bay Fair", "Wrenhaven Games"},
		testOnly: []string{"Lantern Parade", "Gallowend Shanty Weekend"},
	},
	"goodAdj": {
		train:    []string{"friendly", "helpful", "kind", "polite", "patient", "welcoming", "professional", "cheerful"},
		testOnly: []string{"gracious", "accommodating", "personable"},
	},
	"praiseWord": {
		train:    []string{"brilliant", "wonderful", "lovely", "excellent", "fantastic", "great"},
		testOnly: []string{"marvellous", "splendid", "superb"},
	},
	"badWord": {
		train:    []string{"awful", "terrible", "appalling", "disgraceful", "unacceptable", "dreadful"},
		testOnly: []string{"shambolic", "abysmal", "deplorable"},
	},
	"relative": {
		train:    []string{"mother", "father", "son", "daughter", "wife", "husband", "grandmother", "grandad", "friend"},
		testOnly: []string{"stepdaughter", "godson"},
	},
	"spot": {
		train: []string{"in the lounge", "on the car deck", "by the cafe", "in the toilets", "under a seat",
			"on the upper deck", "in the play area", "on the quayside", "in the waiting room", "at the ticket office", "in the terminal building"},
		testOnly: []string{"in the observation saloon", "beside the vending machines"},
	},
	"month": {
		train: []string{"January", "February", "March", "April", "May", "June", "July", "August",
			"September", "October", "November", "December"},
	},
	"day": {
		train: []string{"Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"},
	},
	"ticketType": {
		train:    []string{"ten journey ticket", "season ticket", "island resident card", "day-return", "family saver"},
		testOnly: []string{"carnet"},
	},
	"weather": {
		train:    []string{"storm", "high winds", "fog", "heavy swell", "gales"},
		testOnly: []string{"squalls"},
	},
}

// Reusable phrases (expanded like templates).
var phrases = map[string][]string{
	"someone": {
		"the staff at {port}", "the crew on the {ship}", "{staff} at the ticket office", "the man at the check-in booth",
		"the cafe staff on the {ship}", "the woman on the {port} desk", "the deck crew", "{staff} on the phone",
		"the boarding staff at {port}", "your crew",
	},
	"greeting": {
		"Hello,", "Hi,", "Dear Brindlewick Ferries,", "Good morning,", "Hi there,", "To whom it may concern,",
		"Dear Sir or Madam,", "Hello team,", "Good afternoon,", "Morning,",
	},
	"signoff": {
		"Thanks", "Many thanks, {cname}", "Regards, {cname}", "Cheers", "{cname}", "Thank you, {cname}",
		"Best wishes, {cname}", "Kind regards", "Thanks in advance", "Yours, {cname}",
	},
	"context": {
		"I travel on this route [most weeks|a few times a year|every summer].",
		"We live on {port} and use the ferry a lot.",
		"We are visiting family on {port} next month.",
		"My {relative} and I [often|sometimes] take the ferry to {port}.",
		"This is my first time writing to you.",
		"I am writing on behalf of my {relative}.",
		"We were a group of [four|six|three|five].",
		"Sorry if this is the wrong address.",
	},
	"pax": {"two adults", "one adult", "two adults and two children", "three people", "four passengers",
		"a family of five", "2 adults", "6 people", "one adult and a dog"},
	"praiseAdj": {"so {goodAdj}", "really {goodAdj}", "incredibly {goodAdj}", "extremely {goodAdj}",
		"nothing but {goodAdj}", "so very {goodAdj}", "genuinely {goodAdj}"},
	"complainAdj": {"not {goodAdj} at all", "not very {goodAdj}", "anything but {goodAdj}",
		"far from {goodAdj}", "not the least bit {goodAdj}", "hardly {goodAdj}", "not remotely {goodAdj}"},
}

// templates holds the main sentence(s) of each team's messages.
var templates = map[string][]string{
	"bookings": {
		"I'd like to book {pax} [with a car|on foot|with a van|with bikes] from {port} to {port2} on {date}[, ideally on the {time} sailing|].",
		"Can I change my booking {bref} from {date} to {date2}?",
		"Please could you move my reservation {bref} to the {time} sailing instead of the {time2}.",
		"How much is a [return|single|day return] for {vehicle} and {pax} from {port} to {port2}?",
		"Is there a discount for [students|pensioners|island residents|groups of ten or more|children under five] on the {port} route?",
		"I need to add [a car|a bike|a dog|a trailer|{vehicle}] to my booking {bref} please.",
		"Can I book a cabin on the overnight crossing to {port2} on {date}?",
		"I booked online but never got a confirmation email for booking {bref}, [can you resend it|could it be sent again]?",
		"My sailing on {date} was cancelled because of the {weather}. Can you rebook me onto the next available crossing?",
		"I'd like to cancel my booking {bref} and get a refund please, we can no longer travel on {date}.",
		"Do foot passengers need to book in advance for the {time} from {port}, or can we buy a ticket at the quay?",
		"The website won't let me pay for my booking, it keeps showing error {n3} at the last step.",
		"Can I use my {ticketType} on the {time} from {port} to {port2}?",
		"I want to change the name on booking {bref} as my {relative} can't travel now.",
		"How far in advance can I book a car space for the summer sailings to {port2}?",
		"Is it possible to upgrade to [a cabin|a lounge seat|priority boarding] on booking {bref}?",
		"Is there still space for {vehicle} on the {date} crossing to {port2}? I want to reserve it.",
		"We have booked {pax} for {date} but need to add [one more person|two more people|a child].",
		"I was quoted {price} on the phone but the website says {price2}, which price will I pay for booking {bref}?",
		"Please could you send me a receipt for booking {bref} for my [employer|company|expenses claim].",
		"Can I reserve seats for {pax} on the {time} from {port} on {date}?",
		"How do I pay the balance for my booking {bref}? It is due before {date}.",
		"Can I switch my car booking to foot passengers only? Reference {bref}.",
		"We would like to book the [same|early|late] sailing back from {port2} on {date2} as well.",
		"Is it cheaper to book a return now or two singles? We are going {port} to {port2}.",
		"I'd like an e-ticket for {pax} on sailing {sailno}, how do I book that?",
		"My {ticketType} has expired, can I renew it online or do I need to call?",
		"Can I book {pax} with {vehicle} for the {event} weekend? We'd go from {port}.",
	},
	"timetable": {
		"What time is the first sailing from {port} to {port2} on {day}?",
		"Is the {time} from {port} still running on {date}?",
		"When does the [winter|summer] timetable start this year?",
		"Are sailings to {port2} affected by the {weather} forecast for {day}?",
		"How long does the crossing from {port} to {port2} take?",
		"Does the ferry run on [bank holidays|Christmas Day|New Year's Day|Sundays in winter]?",
		"Will the {time} sailing from {port} connect with the [train|bus|last bus] to {port2}?",
		"Has the {time} from {port} been moved? It isn't on the new timetable.",
		"Is there a late sailing back from {port2} on {day} evenings?",
		"What is the last crossing from {port} on {date}?",
		"Is sailing {sailno} delayed today? The board at {port} doesn't say anything.",
		"Are there extra sailings for the {event} this year?",
		"Could you send me the timetable for {port2} for [March|the summer|next month|the school holidays]?",
		"How often does the ferry go between {port} and {port2} on weekdays?",
		"Is the {ship} back in service yet or is it still in dry dock?",
		"Will sailings be reduced during the refit of the {ship} in {month}?",
		"I can't find the {time} on your timetable anymore, has it been withdrawn?",
		"How early should we be at {port} before the {time} departure?",
		"Does the {time} from {port} call at {port3} on the way?",
		"Which sailings go via {port3} on {day}s?",
		"Is the {time} on {date} running to the normal timetable or the holiday one?",
		"When is the next sailing from {port} after the {time}?",
		"Is there any ferry from {port2} to {port} before {time} on weekdays?",
		"Does the {ship} still do the {port} to {port2} run, or has it changed route?",
		"Will the {date} sailings go ahead if the {weather} carries on?",
		"What are the sailing times from {port} in {month}?",
		"What time do the extra boats for the {event} leave {port}?",
	},
	"lost-property": {
		"I left my {item} on the {ship} on {date}[, on the {time} sailing|].",
		"Has anyone handed in a {colour} {item}? I think I left it {spot} on the {time} from {port}.",
		"My {relative} lost [his|her] {item} on the crossing to {port2} [yesterday|on {date}|last {day}].",
		"I found a {item} {spot} at {port} and gave it to the desk, [hope it gets back to the owner|just letting you know].",
		"Is there a lost property office at {port}? I'm missing my {item} since {date}.",
		"Can you post my {item} to me if it has been found? I'm happy to pay the postage.",
		"I dropped my {item} somewhere between the car deck and the lounge on the {ship}.",
		"Did the crew of the {ship} find a {item} after the {time} crossing on {date}?",
		"I think my {item} fell out of my bag while boarding at {port} on {date}.",
		"We left a {colour} {item} {spot} on {date}, it has a name label saying {cname}.",
		"Please let me know if a {colour} {item} turns up, it has great sentimental value.",
		"Can I collect my {item} from the office at {port} on {day}? You [rang|sent a text] to say it was found.",
		"I've lost a {item} and a {item2}, possibly {spot} of the {ship}.",
		"Has a {item} been found on sailing {sailno}? It's {colour} with a sticker on it.",
		"My {item} went missing on the {ship} [today|yesterday|on {date}], could someone check {spot}?",
		"I believe I left my {item} on the seat when we got off at {port2}.",
		"Is there a way to search for a {item} left on board? I was on the {time} from {port}.",
		"Somebody picked up my {item} by mistake {spot} on the {ship}, they may have handed it in.",
		"Lost: one {colour} {item}, {ship}, {date}. Please call me if you find it.",
		"How long do you keep lost items? My {item} was left on the {ship} on {date}.",
	},
	"complaints": {
		"{someone} [were|was] {complainAdj}[ and made us wait for ages| when we asked for help| to my {relative}|].",
		"I was charged twice for booking {bref} and have never been refunded.",
		"{someone} [were|was] [not friendly at all|not helpful at all|far from helpful|far from friendly|not polite at all][, and we were left waiting| on {date}|].",
		"The {time} sailing was cancelled without any warning and nobody told us why.",
		"The toilets on the {ship} were filthy and the cafe was closed for the whole crossing.",
		"It is not good enough that the ferry was {n} minutes late [again|for the third time this week|on {date}].",
		"Nobody on board was {goodAdj} when my {relative} needed help with the lift.",
		"I have [emailed three times|sent three emails] about my refund for {bref} and still heard nothing back.",
		"The new timetable is {badWord}, the {time} no longer connects with the train at {port}.",
		"One of your crew on the {ship} was rude to my {relative}, which is {badWord}.",
		"We were not allowed on the {time} despite having booking {bref}, which is {badWord}.",
		"The car deck was chaotic and my car was scratched while loading at {port} on {date}.",
		"I reported my {item} lost weeks ago and nobody has bothered to call me back.",
		"The lounge on the {ship} was freezing and not one person apologised.",
		"The announcements on the {ship} were impossible to hear and we nearly missed our stop at {port3}.",
		"Fares have gone up by {price} again and the service is worse than ever.",
		"I waited on hold for {n} minutes and was then cut off, {badWord} service.",
		"The ramp at {port} was broken on {date} and there was no help for wheelchair users.",
		"Our sailing was cancelled on {date} and I was never refunded the {price} I paid.",
		"I am [very|extremely|deeply] disappointed with how we were treated at {port} on {date}.",
		"{someone} [were|was] {complainAdj}, and nobody apologised for the delay.",
		"Your staff never answered my emails about the {time} cancellation, it is {badWord}.",
		"The {ship} left {n} minutes early and we were left standing on the quayside.",
		"Why does the {time} from {port} keep getting cancelled? This is {badWord} for commuters.",
		"The cafe on the {ship} charged {price} for a cold sandwich, and the staff were {complainAdj}.",
		"I want to make a formal complaint about {someone} on {date}.",
		"We were told there was no space for our car even though we booked, {badWord}.",
	},
	"praise": {
		"{someone} [were|was] {praiseAdj}[ and made us feel welcome| when we asked for help| to my {relative}|].",
		"I'd like to thank {staff} on the {ship} who was {praiseAdj} when my {relative} needed help with the lift.",
		"{someone} [were|was] [so friendly|so helpful|so kind|so friendly and helpful][, thank you| on {date}|].",
		"Please pass on my thanks to the crew of the {time} from {port}, nothing was too much trouble.",
		"{staff} at the {port} desk went out of their way to help us rebook after the cancellation.",
		"A big thank you to whoever handed in my {item}, I got it back the next day.",
		"The {ship} was spotless and the cafe was {praiseWord}, thank you.",
		"I can't fault the crew, they were kind and patient with my {relative}.",
		"We have never had such a smooth crossing, well done to everyone on the {ship}.",
		"Not a single problem all week, thank you for a {praiseWord} service.",
		"Despite the delay on {date}, the crew kept everyone informed and were always {goodAdj}.",
		"Just wanted to say the new timetable works really well for us, thank you.",
		"The captain's announcements on the {ship} were clear and funny, the kids loved it.",
		"The woman at the {port} desk could not have been more {goodAdj}.",
		"Compliments to {staff}, who helped my {relative} off the ship with real care.",
		"Your staff were {praiseWord} when our car broke down on the car deck at {port}.",
		"No complaints at all, the {time} from {port} was on time and the crew were {praiseAdj}.",
		"{staff} found my {item} {spot} and kept it safe for me, please thank [him|her] from me.",
		"I wanted to say how {goodAdj} {someone} [were|was] on {date}, a {praiseWord} experience.",
		"{someone} [were|was] {praiseAdj}, please pass this on to them.",
		"Thank you to {staff} who sorted out my booking {bref} so quickly and was {praiseAdj}.",
		"The crossing to {port2} on {date} was {praiseWord}, and {staff} in the cafe was a star.",
		"My {relative} was nervous about the crossing but {staff} was {praiseAdj} and reassuring.",
		"Credit where it is due: the {ship} crew handled the {weather} [brilliantly|calmly|superbly] and kept us safe.",
	},
}

// side holds short remarks that belong to one team's topic but are added to
// messages of another team, as real messages often mention two things.
var side = map[string][]string{
	"bookings": {
		"I still need to sort out my return booking too.",
		"We will probably book again for the summer.",
		"I may need to change my booking later as well.",
	},
	"timetable": {
		"Also, is the {time} still running in the winter?",
		"Could you also tell me when the last sailing back is?",
		"Is the timetable changing in {month}?",
	},
	"lost-property": {
		"Oh, and I may have left a {item} on board as well.",
		"My {relative} also lost a {item} on that crossing.",
	},
	"complaints": {
		"The cafe was shut again, which was a shame.",
		"The crossing was a bit late, but never mind.",
		"The toilets could have been cleaner.",
	},
	"praise": {
		"The crew were lovely as always.",
		"Thanks to {staff} for being so helpful on the phone.",
		"The crossing itself was {praiseWord}.",
	},
}

// misspell lists common misspellings the typo injector may use in place of
// random edits.
var misspell = map[string]string{
	"cancelled":     "canceled",
	"apologised":    "appologised",
	"disappointed":  "dissapointed",
	"Wednesday":     "Wensday",
	"believe":       "beleive",
	"accommodating": "accomodating",
	"which":         "wich",
	"their":         "there",
	"unacceptable":  "unaceptable",
	"professional":  "proffesional",
	"ferry":         "ferrie",
	"sailing":       "sailling",
}

// borderline templates read as plausibly belonging to either of two teams;
// the help desk routes them both ways, so each is used for both teams.
var borderline = []struct {
	teams [2]string
	text  string
}{
	{[2]string{"bookings", "complaints"}, "My sailing on {date} was cancelled and I would like my money back for booking {bref}."},
	{[2]string{"bookings", "complaints"}, "I paid {price} for booking {bref} but the crossing never happened, what happens now?"},
	{[2]string{"bookings", "complaints"}, "The website took my money twice for the {time} from {port}, please sort it out."},
	{[2]string{"timetable", "complaints"}, "The {time} from {port} has gone from the new timetable, which really doesn't suit us."},
	{[2]string{"timetable", "complaints"}, "Why was the {time} to {port2} cancelled on {date}? Nobody could tell us."},
	{[2]string{"timetable", "complaints"}, "The ferry keeps leaving {port} late, is the {time} going to be retimed?"},
	{[2]string{"lost-property", "praise"}, "Thank you for finding my {item} on the {ship}, could you post it to me?"},
	{[2]string{"lost-property", "complaints"}, "I lost my {item} on the {ship} on {date} and still have not heard anything."},
	{[2]string{"bookings", "timetable"}, "Will the {time} run on {date}? If so I want to bring {vehicle} over to {port2}."},
	{[2]string{"bookings", "timetable"}, "Is there a sailing from {port} on {date} with space for {pax}?"},
	{[2]string{"praise", "complaints"}, "The crew on the {ship} were fine but the crossing on {date} was very rough."},
	{[2]string{"praise", "timetable"}, "The new winter timetable suits us, will it stay the same in {month}?"},
}

// connectors introduce a second matter in a message.
var connectors = []string{"Also,", "By the way,", "One more thing:", "Separately,", "And another thing,", "PS", "While I'm writing,"}
