package localeenv

// SetFixed records a change as the init records its own, for Undo.
func SetFixed(name, old string) { fixed, before = name, old }
