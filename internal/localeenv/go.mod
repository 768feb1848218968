module aa.telltale.local/localeenv

go 1.26
