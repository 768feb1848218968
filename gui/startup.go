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
		switch {
		case st.opts.ModelPath != "":
			st.afterProfile = ready
			st.openModel(st.opts.ModelPath, func() {
				if itemGet(st.model) == nil {
					st.afterProfile = nil
					ready()
				}
			})
		case st.opts.AutoRun:
			st.afterProfile = ready
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
