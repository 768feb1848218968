package gui

// startup opens the start-up data and model, and with AutoRun trains,
// profiles and audits; OnReady runs at the end, also after a failure.
func (st *State) startup() {
	ready := func() {
		if st.opts.OnReady != nil {
			st.opts.OnReady()
		}
	}
	src := dataSource{path: st.opts.DataPath, testPath: st.opts.TestPath,
		demoTrain: st.opts.DemoTrain, demoTest: st.opts.DemoTest}
	src.opts.TextCol, src.opts.LabelCol = st.opts.TextCol, st.opts.LabelCol
	st.openData(src, func() {
		if itemGet(st.data) == nil {
			ready()
			return
		}
		audit := func() { st.runAudit(func() { st.suggestText(); ready() }) }
		switch {
		case st.opts.ModelPath != "":
			st.afterProfile = ready
			if st.opts.AutoRun {
				st.afterProfile = audit
			}
			st.openModel(st.opts.ModelPath, func() {
				if itemGet(st.model) == nil {
					st.afterProfile = nil
					ready()
				}
			})
		case st.opts.AutoRun:
			st.afterProfile = audit
			st.afterTrain = func(ok bool) {
				if !ok {
					st.afterProfile = nil
					ready()
				}
			}
			st.trainNow()
		default:
			ready()
		}
	})
}

// suggestText puts a text on the explanation view unless the user typed
// one: the first test text whose prediction replacing the top cue changed,
// so a first visit sees the cue at work.
func (st *State) suggestText() {
	a := itemGet(st.audit)
	if a == nil || len(a.listed) == 0 {
		return
	}
	// The explanation view starts on the first test text; the user's own
	// text is never replaced.
	test := a.cs.Test.Examples
	if t := stringGet(st.explainText); t != "" && (len(test) == 0 || t != test[0].Text) {
		return
	}
	for _, e := range a.examplesOf(0) {
		if e.Split == "test" {
			_ = st.explainText.Set(e.Text)
			return
		}
	}
}
