// Demogen writes the invented demo corpus in testdata/demo: messages sent to
// the help desk of Brindlewick Ferries, a made-up ferry company serving the
// equally made-up Tansey Isles, each labeled with the team that should handle
// it (bookings, timetable, lost-property, complaints, praise).
//
// Usage:
//
//	go run ./internal/demogen -out testdata/demo
//
// It writes train.csv and test.csv (header "text,label", RFC 4180 quoting)
// and README.md, which describes the scenario and the two spurious cues that
// are planted in the training split only:
//
//   - a kiosk footer line containing the token "kioskmail", in most
//     lost-property training messages and few others;
//   - a ticket stamp "TKREF-" plus five digits on the first line, in most
//     complaints training messages and few others.
//
// In the test split both cues occur at the same rate in every team, so a
// model that leans on them loses accuracy there.
//
// The output depends only on the fixed seed: running the program twice gives
// byte-identical files. Messages are built from templates with alternative
// phrasings, shared word pools (ports, ships, staff, lost items), numbers
// (dates, times, sailing numbers, prices, booking codes), a seeded typo
// injector, and word pools reserved for the test split so that it holds
// out-of-vocabulary words.
package main
