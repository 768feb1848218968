package statedict

import (
	"encoding/binary"
	"fmt"
	"math"
	"unicode/utf8"
)

// The pickle reader understands the opcodes of protocol 2 (the protocol
// torch.save uses by default) and the framing, short-string and
// memoization opcodes of protocols 3 and 4, which are data only. Opcodes
// that instantiate classes (INST, OBJ, NEWOBJ, NEWOBJ_EX), look up
// extension registries (EXT1/2/4) or use out-of-band buffers are refused.
// A GLOBAL is accepted only when it names an entry of allowedGlobals; a
// REDUCE only calls one of those entries' Go implementations. Nothing in
// the input is ever executed.
//
// Protocol reference: the Python Library Reference, module pickletools
// (the opcode table and the descriptions of each argument's encoding).

// Values built by the reader: nil (None), bool, int64, bigInt, float64,
// string, []byte, tuple, *list, *dict, global, storageType, *storageRef and
// *tensorRef.
type (
	tuple  []any
	list   struct{ items []any }
	bigInt []byte // a LONG wider than 64 bits: little-endian two's complement, as stored

	// dict is an ordered dictionary (dict and collections.OrderedDict alike).
	dict struct {
		keys, vals []any
	}

	// global is a module attribute a GLOBAL opcode named (always one of
	// allowedGlobals).
	global struct{ module, name string }

	// storageType is one of the torch.*Storage classes.
	storageType struct{ dtype Dtype }

	// storageRef is a storage a persistent id named; its bytes are read
	// later, only if a tensor of the chosen state_dict uses it.
	storageRef struct {
		key   string
		dtype Dtype
		numel int64
	}

	// tensorRef is a tensor of _rebuild_tensor_v2: a strided view of a
	// storage.
	tensorRef struct {
		storage       *storageRef
		offset        int64
		shape, stride []int64
	}
)

func (g global) String() string { return g.module + "." + g.name }

// set stores key → val, replacing the value of an equal scalar key as a
// Python dict does.
func (d *dict) set(key, val any) {
	switch key.(type) {
	case string, int64, bool, float64, nil:
		for i, k := range d.keys {
			if k == key {
				d.vals[i] = val
				return
			}
		}
	}
	d.keys = append(d.keys, key)
	d.vals = append(d.vals, val)
}

// storageTypes are the torch.*Storage classes a persistent id may name.
var storageTypes = map[string]Dtype{
	"FloatStorage": Float32, "DoubleStorage": Float64, "HalfStorage": Float16, "BFloat16Storage": BFloat16,
	"LongStorage": Int64, "IntStorage": Int32, "ShortStorage": Int16, "CharStorage": Int8,
	"ByteStorage": Uint8, "BoolStorage": Bool,
}

// reducers are the only callables a REDUCE may call, by "module.name".
var reducers = map[string]func(args tuple) (any, error){
	"collections.OrderedDict":         newOrderedDict,
	"torch._utils._rebuild_tensor_v2": rebuildTensor,
	"torch._utils._rebuild_parameter": rebuildParameter,
	"torch._utils._rebuild_tensor":    rebuildTensorV1,
}

// allowed reports whether a GLOBAL may name module.name.
func allowed(module, name string) bool {
	if module == "torch" {
		_, ok := storageTypes[name]
		return ok
	}
	_, ok := reducers[module+"."+name]
	return ok
}

// pickleError is a malformed or refused pickle, at a byte offset.
type pickleError struct {
	offset int
	msg    string
	global string // the refused global, if that is the problem
}

func (e *pickleError) Error() string { return fmt.Sprintf("offset %d: %s", e.offset, e.msg) }

// unpickler reads one pickle from data[pos:].
type unpickler struct {
	data  []byte
	pos   int
	op    int // offset of the opcode being run
	stack []any
	marks []int
	memo  map[uint32]any
	// persistent resolves a persistent id (BINPERSID); nil refuses them.
	persistent func(pid any) (any, error)
}

func (u *unpickler) fail(format string, args ...any) error {
	return &pickleError{offset: u.op, msg: fmt.Sprintf(format, args...)}
}

// take returns the next n bytes, or an error when fewer are left. n is
// checked before any allocation, so a length field can never make the
// reader allocate more than the input holds.
func (u *unpickler) take(n uint64) ([]byte, error) {
	if n > uint64(len(u.data)-u.pos) {
		return nil, u.fail("truncated: %d bytes announced, %d left", n, len(u.data)-u.pos)
	}
	b := u.data[u.pos : u.pos+int(n)]
	u.pos += int(n)
	return b, nil
}

func (u *unpickler) u8() (uint64, error) {
	b, err := u.take(1)
	if err != nil {
		return 0, err
	}
	return uint64(b[0]), nil
}

func (u *unpickler) u16() (uint64, error) {
	b, err := u.take(2)
	if err != nil {
		return 0, err
	}
	return uint64(binary.LittleEndian.Uint16(b)), nil
}

func (u *unpickler) u32() (uint64, error) {
	b, err := u.take(4)
	if err != nil {
		return 0, err
	}
	return uint64(binary.LittleEndian.Uint32(b)), nil
}

func (u *unpickler) u64() (uint64, error) {
	b, err := u.take(8)
	if err != nil {
		return 0, err
	}
	return binary.LittleEndian.Uint64(b), nil
}

func (u *unpickler) push(v any) { u.stack = append(u.stack, v) }

func (u *unpickler) pop() (any, error) {
	if len(u.stack) == 0 || (len(u.marks) > 0 && len(u.stack) == u.marks[len(u.marks)-1]) {
		return nil, u.fail("stack underflow")
	}
	v := u.stack[len(u.stack)-1]
	u.stack = u.stack[:len(u.stack)-1]
	return v, nil
}

func (u *unpickler) top() (any, error) {
	if len(u.stack) == 0 || (len(u.marks) > 0 && len(u.stack) == u.marks[len(u.marks)-1]) {
		return nil, u.fail("stack underflow")
	}
	return u.stack[len(u.stack)-1], nil
}

// popMark pops everything down to the last MARK and the mark itself.
func (u *unpickler) popMark() ([]any, error) {
	if len(u.marks) == 0 {
		return nil, u.fail("no MARK on the stack")
	}
	m := u.marks[len(u.marks)-1]
	u.marks = u.marks[:len(u.marks)-1]
	items := append([]any(nil), u.stack[m:]...)
	u.stack = u.stack[:m]
	return items, nil
}

// load runs the opcodes up to STOP and returns the value it leaves.
func (u *unpickler) load() (any, error) {
	u.memo = map[uint32]any{}
	for {
		if u.pos >= len(u.data) {
			return nil, u.fail("truncated: no STOP opcode before the end of the data")
		}
		u.op = u.pos
		op := u.data[u.pos]
		u.pos++
		if op == '.' { // STOP
			if len(u.marks) > 0 || len(u.stack) != 1 {
				return nil, u.fail("STOP with %d values and %d marks on the stack", len(u.stack), len(u.marks))
			}
			return u.stack[0], nil
		}
		if err := u.step(op); err != nil {
			return nil, err
		}
	}
}

// step runs one opcode other than STOP.
func (u *unpickler) step(op byte) error {
	if done, err := u.stackOp(op); done {
		return err
	}
	if done, err := u.scalar(op); done {
		return err
	}
	if done, err := u.container(op); done {
		return err
	}
	if done, err := u.memoOp(op); done {
		return err
	}
	switch op {
	case 'c': // GLOBAL module\nname\n
		return u.global()
	case 0x93: // STACK_GLOBAL
		name, err1 := u.pop()
		module, err2 := u.pop()
		if err1 != nil || err2 != nil {
			return u.fail("stack underflow")
		}
		ms, ok1 := module.(string)
		ns, ok2 := name.(string)
		if !ok1 || !ok2 {
			return u.fail("STACK_GLOBAL needs two strings")
		}
		return u.pushGlobal(ms, ns)
	case 'R': // REDUCE
		return u.reduce()
	case 'b': // BUILD
		return u.build()
	case 'Q': // BINPERSID
		pid, err := u.pop()
		if err != nil {
			return err
		}
		if u.persistent == nil {
			return u.fail("persistent id where none is expected")
		}
		v, err := u.persistent(pid)
		if err != nil {
			return u.fail("%v", err)
		}
		u.push(v)
		return nil
	case 'i', 'o', 0x81, 0x92:
		return u.fail("opcode %q builds an object of a class: refused (a state_dict holds only tensors and containers)", op)
	case 0x82, 0x83, 0x84:
		return u.fail("opcode %q looks up the extension registry: refused", op)
	case 'P':
		return u.fail("text persistent ids (PERSID) are not used by torch.save: refused")
	}
	return u.fail("opcode 0x%02x is not part of the pickle subset torch.save writes", op)
}

// stackOp handles the protocol, framing and stack opcodes and the
// constants None, True and False.
func (u *unpickler) stackOp(op byte) (bool, error) {
	switch op {
	case 0x80: // PROTO
		v, err := u.u8()
		if err == nil && v > 5 {
			err = u.fail("pickle protocol %d is newer than 5", v)
		}
		return true, err
	case 0x95: // FRAME: only a length hint, the opcodes follow in line
		_, err := u.u64()
		return true, err
	case '(': // MARK
		u.marks = append(u.marks, len(u.stack))
	case '0': // POP
		_, err := u.pop()
		return true, err
	case '1': // POP_MARK
		_, err := u.popMark()
		return true, err
	case '2': // DUP
		v, err := u.top()
		if err != nil {
			return true, err
		}
		u.push(v)
	case 'N':
		u.push(nil)
	case 0x88:
		u.push(true)
	case 0x89:
		u.push(false)
	default:
		return false, nil
	}
	return true, nil
}

// scalar handles the opcodes that push a number, a string or bytes.
func (u *unpickler) scalar(op byte) (bool, error) {
	var n uint64
	var err error
	switch op {
	case 'J': // BININT
		n, err = u.u32()
		u.push(int64(int32(uint32(n))))
	case 'K': // BININT1
		n, err = u.u8()
		u.push(int64(n))
	case 'M': // BININT2
		n, err = u.u16()
		u.push(int64(n))
	case 0x8a, 0x8b: // LONG1, LONG4
		if op == 0x8a {
			n, err = u.u8()
		} else {
			n, err = u.u32()
		}
		if err == nil {
			var b []byte
			if b, err = u.take(n); err == nil {
				u.push(decodeLong(b))
			}
		}
	case 'G': // BINFLOAT, big-endian
		var b []byte
		if b, err = u.take(8); err == nil {
			u.push(math.Float64frombits(binary.BigEndian.Uint64(b)))
		}
	case 'X', 0x8c, 0x8d: // BINUNICODE, SHORT_BINUNICODE, BINUNICODE8
		switch op {
		case 'X':
			n, err = u.u32()
		case 0x8c:
			n, err = u.u8()
		default:
			n, err = u.u64()
		}
		if err == nil {
			var b []byte
			if b, err = u.take(n); err == nil {
				if !utf8.Valid(b) {
					return true, u.fail("a string that is not UTF-8")
				}
				u.push(string(b))
			}
		}
	case 'T', 'U', 'B', 'C', 0x8e: // BINSTRING, SHORT_BINSTRING, BINBYTES, SHORT_BINBYTES, BINBYTES8
		switch op {
		case 'U', 'C':
			n, err = u.u8()
		case 0x8e:
			n, err = u.u64()
		default:
			n, err = u.u32()
		}
		if err == nil {
			var b []byte
			if b, err = u.take(n); err == nil {
				u.push(append([]byte(nil), b...))
			}
		}
	default:
		return false, nil
	}
	return true, err
}

// decodeLong reads a little-endian two's-complement integer of LONG1/LONG4.
func decodeLong(b []byte) any {
	if len(b) > 8 {
		return bigInt(append([]byte(nil), b...))
	}
	var v uint64
	for i := len(b) - 1; i >= 0; i-- {
		v = v<<8 | uint64(b[i])
	}
	if len(b) > 0 && len(b) < 8 && b[len(b)-1]&0x80 != 0 {
		v |= ^uint64(0) << (8 * uint(len(b)))
	}
	return int64(v)
}

// container handles tuples, lists and dicts.
func (u *unpickler) container(op byte) (bool, error) {
	switch op {
	case ')':
		u.push(tuple{})
	case 't': // TUPLE
		items, err := u.popMark()
		if err != nil {
			return true, err
		}
		u.push(tuple(items))
	case 0x85, 0x86, 0x87: // TUPLE1, TUPLE2, TUPLE3
		n := int(op-0x85) + 1
		t := make(tuple, n)
		for i := n - 1; i >= 0; i-- {
			v, err := u.pop()
			if err != nil {
				return true, err
			}
			t[i] = v
		}
		u.push(t)
	case ']': // EMPTY_LIST
		u.push(&list{})
	case 'l': // LIST
		items, err := u.popMark()
		if err != nil {
			return true, err
		}
		u.push(&list{items: items})
	case 'a', 'e': // APPEND, APPENDS
		var items []any
		var err error
		if op == 'a' {
			var v any
			v, err = u.pop()
			items = []any{v}
		} else {
			items, err = u.popMark()
		}
		if err != nil {
			return true, err
		}
		l, err := u.top()
		if err != nil {
			return true, err
		}
		ls, ok := l.(*list)
		if !ok {
			return true, u.fail("APPEND to a %s, not a list", kind(l))
		}
		ls.items = append(ls.items, items...)
	case '}': // EMPTY_DICT
		u.push(&dict{})
	case 'd', 's', 'u': // DICT, SETITEM, SETITEMS
		return true, u.setItems(op)
	default:
		return false, nil
	}
	return true, nil
}

func (u *unpickler) setItems(op byte) error {
	var items []any
	var err error
	if op == 's' {
		v, err1 := u.pop()
		k, err2 := u.pop()
		if err1 != nil || err2 != nil {
			return u.fail("stack underflow")
		}
		items = []any{k, v}
	} else if items, err = u.popMark(); err != nil {
		return err
	}
	if len(items)%2 != 0 {
		return u.fail("a dict item without a value")
	}
	var d *dict
	if op == 'd' {
		d = &dict{}
		u.push(d)
	} else {
		t, err := u.top()
		if err != nil {
			return err
		}
		var ok bool
		if d, ok = t.(*dict); !ok {
			return u.fail("SETITEM on a %s, not a dict", kind(t))
		}
	}
	for i := 0; i < len(items); i += 2 {
		switch items[i].(type) {
		case *list, *dict:
			return u.fail("a dict key that is a %s (unhashable)", kind(items[i]))
		}
		d.set(items[i], items[i+1])
	}
	return nil
}

// memoOp handles the memo: PUT and GET in their binary forms and MEMOIZE.
func (u *unpickler) memoOp(op byte) (bool, error) {
	var idx uint64
	var err error
	switch op {
	case 'q', 'h': // BINPUT, BINGET
		idx, err = u.u8()
	case 'r', 'j': // LONG_BINPUT, LONG_BINGET
		idx, err = u.u32()
	case 0x94: // MEMOIZE
		idx = uint64(len(u.memo))
	case 'p', 'g':
		return true, u.fail("text memo opcodes (PUT, GET) are not used by torch.save: refused")
	default:
		return false, nil
	}
	if err != nil {
		return true, err
	}
	if op == 'h' || op == 'j' {
		v, ok := u.memo[uint32(idx)]
		if !ok {
			return true, u.fail("memo entry %d used before it was stored", idx)
		}
		u.push(v)
		return true, nil
	}
	v, err := u.top()
	if err != nil {
		return true, err
	}
	u.memo[uint32(idx)] = v
	return true, nil
}

// global reads GLOBAL's two text lines.
func (u *unpickler) global() error {
	line := func() (string, error) {
		for i := u.pos; i < len(u.data) && i-u.pos < 256; i++ {
			if u.data[i] == '\n' {
				s := string(u.data[u.pos:i])
				u.pos = i + 1
				return s, nil
			}
		}
		return "", u.fail("GLOBAL without a complete module and name")
	}
	module, err := line()
	if err != nil {
		return err
	}
	name, err := line()
	if err != nil {
		return err
	}
	return u.pushGlobal(module, name)
}

func (u *unpickler) pushGlobal(module, name string) error {
	if !allowed(module, name) {
		if !utf8.ValidString(module + name) {
			module, name = fmt.Sprintf("%q", module), fmt.Sprintf("%q", name)
		}
		return &pickleError{offset: u.op, global: module + "." + name,
			msg: fmt.Sprintf("the pickle asks for %s.%s, which is not a tensor or a container: refused (only tensors, their storages and ordered dicts are read; nothing is run)", module, name)}
	}
	if module == "torch" {
		u.push(storageType{storageTypes[name]})
		return nil
	}
	u.push(global{module, name})
	return nil
}

func (u *unpickler) reduce() error {
	args, err1 := u.pop()
	fn, err2 := u.pop()
	if err1 != nil || err2 != nil {
		return u.fail("stack underflow")
	}
	g, ok := fn.(global)
	if !ok {
		return u.fail("REDUCE calls a %s, not an allowed function", kind(fn))
	}
	a, ok := args.(tuple)
	if !ok {
		return u.fail("REDUCE of %s with a %s, not a tuple of arguments", g, kind(args))
	}
	v, err := reducers[g.String()](a)
	if err != nil {
		return u.fail("%s: %v", g, err)
	}
	u.push(v)
	return nil
}

// build handles BUILD, which sets an object's state. The only use in a
// state_dict is the _metadata attribute of the OrderedDict, which holds
// module versions and is not needed: it is dropped.
func (u *unpickler) build() error {
	state, err := u.pop()
	if err != nil {
		return err
	}
	obj, err := u.top()
	if err != nil {
		return err
	}
	if _, ok := obj.(*dict); !ok {
		return u.fail("BUILD sets the state of a %s: refused (only an ordered dict's attributes are accepted)", kind(obj))
	}
	switch state.(type) {
	case *dict, nil:
		return nil
	}
	return u.fail("BUILD with a %s as the state of a dict", kind(state))
}

func newOrderedDict(args tuple) (any, error) {
	if len(args) != 0 {
		return nil, fmt.Errorf("%d arguments, expected none", len(args))
	}
	return &dict{}, nil
}

// rebuildTensor is torch._utils._rebuild_tensor_v2(storage, storage_offset,
// size, stride, requires_grad, backward_hooks[, metadata]).
func rebuildTensor(args tuple) (any, error) {
	if len(args) != 6 && len(args) != 7 {
		return nil, fmt.Errorf("%d arguments, expected 6 or 7", len(args))
	}
	return tensorOf(args[:4])
}

// rebuildTensorV1 is torch._utils._rebuild_tensor(storage, storage_offset,
// size, stride) of older files.
func rebuildTensorV1(args tuple) (any, error) {
	if len(args) != 4 {
		return nil, fmt.Errorf("%d arguments, expected 4", len(args))
	}
	return tensorOf(args)
}

// maxRank bounds the dimensions of a tensor; a sentence CNN's have at most 4.
const maxRank = 8

func tensorOf(args tuple) (*tensorRef, error) {
	st, ok := args[0].(*storageRef)
	if !ok {
		return nil, fmt.Errorf("the storage is a %s", kind(args[0]))
	}
	off, ok := args[1].(int64)
	if !ok || off < 0 {
		return nil, fmt.Errorf("the storage offset is %v", args[1])
	}
	shape, err1 := ints(args[2])
	stride, err2 := ints(args[3])
	if err1 != nil || err2 != nil || len(shape) != len(stride) || len(shape) > maxRank {
		return nil, fmt.Errorf("size %v and stride %v do not describe a tensor", args[2], args[3])
	}
	// The last element a view reaches must lie inside its storage; every
	// product is checked before it is formed.
	last, n := off, int64(1)
	for i, s := range shape {
		if s == 0 {
			last, n = -1, 0
			break
		}
		if stride[i] > 0 && s-1 > (math.MaxInt64-last)/stride[i] {
			return nil, fmt.Errorf("size %v and stride %v overflow", shape, stride)
		}
		last += (s - 1) * stride[i]
		if n > math.MaxInt64/s {
			return nil, fmt.Errorf("size %v overflows", shape)
		}
		n *= s
	}
	if last >= st.numel || (n == 0 && off > st.numel) {
		return nil, fmt.Errorf("size %v, stride %v and offset %d reach past the storage of %d elements", shape, stride, off, st.numel)
	}
	return &tensorRef{storage: st, offset: off, shape: shape, stride: stride}, nil
}

// ints reads a tuple of non-negative integers.
func ints(v any) ([]int64, error) {
	t, ok := v.(tuple)
	if !ok {
		return nil, fmt.Errorf("not a tuple")
	}
	out := make([]int64, len(t))
	for i, x := range t {
		n, ok := x.(int64)
		if !ok || n < 0 {
			return nil, fmt.Errorf("not a tuple of non-negative integers")
		}
		out[i] = n
	}
	return out, nil
}

// rebuildParameter is torch._utils._rebuild_parameter(data, requires_grad,
// backward_hooks): a Parameter is its tensor here.
func rebuildParameter(args tuple) (any, error) {
	if len(args) != 3 {
		return nil, fmt.Errorf("%d arguments, expected 3", len(args))
	}
	t, ok := args[0].(*tensorRef)
	if !ok {
		return nil, fmt.Errorf("the data is a %s, not a tensor", kind(args[0]))
	}
	return t, nil
}

// kind names the pickle type of v for messages.
func kind(v any) string {
	switch v.(type) {
	case nil:
		return "None"
	case bool:
		return "bool"
	case int64, bigInt:
		return "int"
	case float64:
		return "float"
	case string:
		return "str"
	case []byte:
		return "bytes"
	case tuple:
		return "tuple"
	case *list:
		return "list"
	case *dict:
		return "dict"
	case global:
		return "global " + v.(global).String()
	case storageType:
		return "storage class"
	case *storageRef:
		return "storage"
	case *tensorRef:
		return "tensor"
	}
	return fmt.Sprintf("%T", v)
}
