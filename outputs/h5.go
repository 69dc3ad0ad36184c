package outputs

// The HDF5 layer. gonum.org/v1/hdf5 does the files, groups, datasets and
// numeric attributes. It has no UTF-8 strings, no external links, no way to
// read the library's error messages, and it silences the library's error
// printing only on the thread that initialised it (the error stack of a
// thread-safe libhdf5 is per thread), so the few C calls below fill those
// gaps; dataset data are written by a C call too, because gonum's Write
// closes a datatype after a failed H5Dwrite, which clears the error stack
// (and with it the errno of a full disk). Every HDF5 operation of this
// package runs inside h5call, which pins
// the goroutine to one OS thread so that the error stack read after a
// failure is the one the failure wrote.

/*
#cgo pkg-config: hdf5
#include <hdf5.h>
#include <stdlib.h>
#include <string.h>

// memix_h5_write writes a whole dataset from buf, held in memory as mtype;
// nothing else touches the library before the caller reads the error stack.
static herr_t memix_h5_write(hid_t ds, hid_t mtype, const void *buf) {
	return H5Dwrite(ds, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf);
}

static void memix_h5_quiet(void) {
	H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
	H5Eclear2(H5E_DEFAULT);
}

typedef struct { char *buf; size_t len, cap; int n; } memix_msgs;

static herr_t memix_h5_walk(unsigned n, const H5E_error2_t *e, void *data) {
	memix_msgs *m = (memix_msgs *)data;
	if (m->n >= 4 || e->desc == NULL || e->desc[0] == 0) return 0;
	size_t d = strlen(e->desc);
	if (m->len + d + 3 >= m->cap) return 0;
	if (m->len > 0) { memcpy(m->buf + m->len, ": ", 2); m->len += 2; }
	memcpy(m->buf + m->len, e->desc, d);
	m->len += d;
	m->buf[m->len] = 0;
	m->n++;
	return 0;
}

// memix_h5_stack writes the descriptions of the calling thread's HDF5 error
// stack, innermost (most specific) first, into buf and clears the stack.
static void memix_h5_stack(char *buf, size_t cap) {
	memix_msgs m = {buf, 0, cap, 0};
	buf[0] = 0;
	H5Ewalk2(H5E_DEFAULT, H5E_WALK_UPWARD, memix_h5_walk, &m);
	H5Eclear2(H5E_DEFAULT);
}

static hid_t memix_h5_utf8(void) {
	hid_t t = H5Tcopy(H5T_C_S1);
	if (t < 0) return t;
	if (H5Tset_size(t, H5T_VARIABLE) < 0 || H5Tset_cset(t, H5T_CSET_UTF8) < 0) {
		H5Tclose(t);
		return -1;
	}
	return t;
}

// memix_h5_put_strings attaches a variable-length UTF-8 string attribute:
// scalar when scalar != 0 (n must be 1), else one-dimensional of length n.
static herr_t memix_h5_put_strings(hid_t loc, const char *name, char **vals, hsize_t n, int scalar) {
	herr_t rc = -1;
	hid_t t = memix_h5_utf8(), s = -1, a = -1;
	if (t < 0) goto done;
	s = scalar ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &n, NULL);
	if (s < 0) goto done;
	a = H5Acreate2(loc, name, t, s, H5P_DEFAULT, H5P_DEFAULT);
	if (a < 0) goto done;
	rc = H5Awrite(a, t, vals);
done:
	if (a >= 0 && H5Aclose(a) < 0) rc = -1;
	if (s >= 0) H5Sclose(s);
	if (t >= 0) H5Tclose(t);
	return rc;
}

// memix_h5_get_strings reads a string attribute (scalar or 1-D) as
// variable-length UTF-8 strings into a new array *out of *n pointers; free
// it with memix_h5_free_strings.
static herr_t memix_h5_get_strings(hid_t loc, const char *name, char ***out, hssize_t *n) {
	herr_t rc = -1;
	hid_t t = memix_h5_utf8(), a = -1, s = -1;
	*out = NULL;
	*n = 0;
	if (t < 0) goto done;
	a = H5Aopen(loc, name, H5P_DEFAULT);
	if (a < 0) goto done;
	s = H5Aget_space(a);
	if (s < 0) goto done;
	*n = H5Sget_simple_extent_npoints(s);
	if (*n < 0) goto done;
	*out = (char **)calloc(*n > 0 ? (size_t)*n : 1, sizeof(char *));
	if (*out == NULL) goto done;
	rc = H5Aread(a, t, *out);
done:
	if (s >= 0) H5Sclose(s);
	if (a >= 0) H5Aclose(a);
	if (t >= 0) H5Tclose(t);
	return rc;
}

static void memix_h5_free_strings(char **v, hssize_t n) {
	if (v == NULL) return;
	for (hssize_t i = 0; i < n; i++) {
		if (v[i] != NULL) H5free_memory(v[i]);
	}
	free(v);
}

static htri_t memix_h5_attr_exists(hid_t loc, const char *name) {
	return H5Aexists(loc, name);
}

static herr_t memix_h5_link_external(hid_t loc, const char *name, const char *file, const char *obj) {
	return H5Lcreate_external(file, obj, loc, name, H5P_DEFAULT, H5P_DEFAULT);
}

// memix_h5_link_target copies the file name of the external link name in
// loc into file (at most cap bytes with the terminator). It returns 1 for an
// external link, 0 for another kind of link, negative on error.
static int memix_h5_link_target(hid_t loc, const char *name, char *file, size_t cap) {
	H5L_info_t info;
	if (H5Lget_info(loc, name, &info, H5P_DEFAULT) < 0) return -1;
	if (info.type != H5L_TYPE_EXTERNAL) return 0;
	void *val = malloc(info.u.val_size);
	if (val == NULL) return -1;
	int rc = -1;
	const char *f = NULL, *o = NULL;
	unsigned flags = 0;
	if (H5Lget_val(loc, name, val, info.u.val_size, H5P_DEFAULT) >= 0 &&
	    H5Lunpack_elink_val(val, info.u.val_size, &flags, &f, &o) >= 0) {
		strncpy(file, f, cap - 1);
		file[cap - 1] = 0;
		rc = 1;
	}
	free(val);
	return rc;
}
*/
import "C"

import (
	"errors"
	"fmt"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"unsafe"

	"gonum.org/v1/hdf5"
)

// h5call runs fn with the goroutine locked to its OS thread and HDF5's
// automatic error printing off on that thread, so that h5fail can read the
// error stack of a failed call.
func h5call(fn func() error) error {
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	C.memix_h5_quiet()
	return fn()
}

// h5fail turns a failed HDF5 call into an error that says what was being
// done and what the library reported. When the library reports a system
// error number (errno = N), the error wraps it, so that
// errors.Is(err, syscall.ENOSPC) detects a full disk. It must be called
// inside h5call, right after the failing call and before any other HDF5
// call.
func h5fail(what string, err error) error {
	var buf [2048]C.char
	C.memix_h5_stack(&buf[0], C.size_t(len(buf)))
	msg := C.GoString(&buf[0])
	if msg == "" {
		if err == nil {
			return errors.New(what)
		}
		return fmt.Errorf("%s: %v", what, err)
	}
	// The library's write-failure message starts with a time stamp that
	// ends in a newline; it says nothing useful here.
	msg = h5TimeRE.ReplaceAllString(msg, "")
	msg = strings.ReplaceAll(msg, "\n", " ")
	if m := h5ErrnoRE.FindStringSubmatch(msg); m != nil {
		if n, perr := strconv.Atoi(m[1]); perr == nil && n > 0 {
			return &h5Error{what + ": " + msg, syscall.Errno(n)}
		}
	}
	return fmt.Errorf("%s: %s", what, msg)
}

var (
	h5TimeRE  = regexp.MustCompile(`time = [^,]*\n\s*,\s*`)
	h5ErrnoRE = regexp.MustCompile(`errno = ([0-9]+)`)
)

// h5Error is an HDF5 failure caused by a system error.
type h5Error struct {
	msg   string
	errno syscall.Errno
}

func (e *h5Error) Error() string { return e.msg }
func (e *h5Error) Unwrap() error { return e.errno }

// attrHolder is an HDF5 object that carries attributes (a group or a
// dataset).
type attrHolder interface {
	CreateAttribute(name string, dtype *hdf5.Datatype, dspace *hdf5.Dataspace) (*hdf5.Attribute, error)
	OpenAttribute(name string) (*hdf5.Attribute, error)
	ID() int64
}

func cid(o attrHolder) C.hid_t { return C.hid_t(o.ID()) }

// putStrings attaches a UTF-8 string attribute: scalar for one value when
// scalar is true, else a 1-D array.
func putStrings(o attrHolder, name string, vals []string, scalar bool) error {
	if scalar && len(vals) != 1 {
		panic("outputs: scalar string attribute needs one value")
	}
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	n := len(vals)
	arr := (**C.char)(C.calloc(C.size_t(max(n, 1)), C.size_t(unsafe.Sizeof((*C.char)(nil)))))
	ptrs := unsafe.Slice(arr, max(n, 1))
	defer func() {
		for _, p := range ptrs {
			C.free(unsafe.Pointer(p))
		}
		C.free(unsafe.Pointer(arr))
	}()
	for i, v := range vals {
		if strings.IndexByte(v, 0) >= 0 {
			return fmt.Errorf("attribute %s: value holds a NUL byte", name)
		}
		ptrs[i] = C.CString(v)
	}
	sc := C.int(0)
	if scalar {
		sc = 1
	}
	if C.memix_h5_put_strings(cid(o), cname, arr, C.hsize_t(n), sc) < 0 {
		return h5fail("write attribute "+name, nil)
	}
	return nil
}

func putString(o attrHolder, name, val string) error {
	return putStrings(o, name, []string{val}, true)
}

// getStrings reads a string attribute (scalar or 1-D).
func getStrings(o attrHolder, name string) ([]string, error) {
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	var arr **C.char
	var n C.hssize_t
	rc := C.memix_h5_get_strings(cid(o), cname, &arr, &n)
	defer C.memix_h5_free_strings(arr, n)
	if rc < 0 {
		return nil, h5fail("read string attribute "+name, nil)
	}
	out := make([]string, int(n))
	for i, p := range unsafe.Slice(arr, int(n)) {
		if p != nil {
			out[i] = C.GoString(p)
		}
	}
	return out, nil
}

func getString(o attrHolder, name string) (string, error) {
	v, err := getStrings(o, name)
	if err != nil {
		return "", err
	}
	if len(v) != 1 {
		return "", fmt.Errorf("attribute %s: %d strings, want 1", name, len(v))
	}
	return v[0], nil
}

func hasAttr(o attrHolder, name string) bool {
	cname := C.CString(name)
	defer C.free(unsafe.Pointer(cname))
	r := C.memix_h5_attr_exists(cid(o), cname)
	if r < 0 {
		C.memix_h5_quiet()
	}
	return r > 0
}

// putScalar attaches a scalar numeric attribute; v is *float64 or *int64.
func putScalar(o attrHolder, name string, v any) error {
	var t *hdf5.Datatype
	switch v.(type) {
	case *float64:
		t = hdf5.T_NATIVE_DOUBLE
	case *int64:
		t = hdf5.T_NATIVE_INT64
	default:
		panic(fmt.Sprintf("outputs: attribute type %T", v))
	}
	sp, err := hdf5.CreateDataspace(hdf5.S_SCALAR)
	if err != nil {
		return h5fail("create dataspace", err)
	}
	defer sp.Close()
	a, err := o.CreateAttribute(name, t, sp)
	if err != nil {
		return h5fail("create attribute "+name, err)
	}
	if err := a.Write(v, t); err != nil {
		e := h5fail("write attribute "+name, err)
		a.Close()
		return e
	}
	if err := a.Close(); err != nil {
		return h5fail("close attribute "+name, err)
	}
	return nil
}

func putF64(o attrHolder, name string, v float64) error { return putScalar(o, name, &v) }
func putI64(o attrHolder, name string, v int64) error   { return putScalar(o, name, &v) }

// getScalar reads a scalar numeric attribute into v (*float64 or *int64),
// converting the stored type. The value is read into a local first: cgo
// refuses a pointer into a Go object that holds other Go pointers.
func getScalar(o attrHolder, name string, v any) error {
	a, err := o.OpenAttribute(name)
	if err != nil {
		return h5fail("open attribute "+name, err)
	}
	defer a.Close()
	sp := a.Space()
	if sp == nil {
		return h5fail("attribute "+name+": dataspace", nil)
	}
	np := sp.SimpleExtentNPoints()
	sp.Close()
	if np != 1 {
		return fmt.Errorf("attribute %s: %d values, want 1", name, np)
	}
	switch p := v.(type) {
	case *float64:
		x := new(float64)
		if err := a.Read(x, hdf5.T_NATIVE_DOUBLE); err != nil {
			return h5fail("read attribute "+name, err)
		}
		*p = *x
	case *int64:
		x := new(int64)
		if err := a.Read(x, hdf5.T_NATIVE_INT64); err != nil {
			return h5fail("read attribute "+name, err)
		}
		*p = *x
	default:
		panic(fmt.Sprintf("outputs: attribute type %T", v))
	}
	return nil
}

// linkExternal creates in g the link name to object obj of file file
// (a path relative to the directory of the file holding g).
func linkExternal(g *hdf5.Group, name, file, obj string) error {
	cn, cf, co := C.CString(name), C.CString(file), C.CString(obj)
	defer C.free(unsafe.Pointer(cn))
	defer C.free(unsafe.Pointer(cf))
	defer C.free(unsafe.Pointer(co))
	if C.memix_h5_link_external(C.hid_t(g.ID()), cn, cf, co) < 0 {
		return h5fail("create external link "+name+" → "+file, nil)
	}
	return nil
}

// linkTarget returns the file an external link in g points to, or "" if
// name is another kind of link.
func linkTarget(g *hdf5.Group, name string) (string, error) {
	cn := C.CString(name)
	defer C.free(unsafe.Pointer(cn))
	var buf [4096]C.char
	switch r := C.memix_h5_link_target(C.hid_t(g.ID()), cn, &buf[0], C.size_t(len(buf))); {
	case r < 0:
		return "", h5fail("read link "+name, nil)
	case r == 0:
		return "", nil
	}
	return C.GoString(&buf[0]), nil
}

// A dataset element type this package writes.
type h5elem interface{ float64 | int64 | uint8 }

func h5type[T h5elem]() *hdf5.Datatype {
	var z T
	switch any(z).(type) {
	case float64:
		return hdf5.T_NATIVE_DOUBLE
	case int64:
		return hdf5.T_NATIVE_INT64
	default:
		return hdf5.T_NATIVE_UINT8
	}
}

// writeDataset creates dataset name in g with the given shape (nil for a
// scalar), writes data (whose length must be the product of dims) and
// attaches the unit and any further string attributes (name, value pairs).
func writeDataset[T h5elem](g *hdf5.Group, name string, dims []uint, data []T, unit string, attrs ...string) error {
	n := uint(1)
	for _, d := range dims {
		n *= d
	}
	if uint(len(data)) != n {
		panic(fmt.Sprintf("outputs: dataset %s: %d values for shape %v", name, len(data), dims))
	}
	var sp *hdf5.Dataspace
	var err error
	if dims == nil {
		sp, err = hdf5.CreateDataspace(hdf5.S_SCALAR)
	} else {
		sp, err = hdf5.CreateSimpleDataspace(dims, nil)
	}
	if err != nil {
		return h5fail("create dataspace for "+name, err)
	}
	defer sp.Close()
	ds, err := g.CreateDataset(name, h5type[T](), sp)
	if err != nil {
		return h5fail("create dataset "+name, err)
	}
	if n > 0 {
		if rc := C.memix_h5_write(C.hid_t(ds.ID()), C.hid_t(h5type[T]().ID()), unsafe.Pointer(&data[0])); rc < 0 {
			e := h5fail("write dataset "+name, fmt.Errorf("H5Dwrite returned %d", int(rc)))
			ds.Close()
			return e
		}
	}
	if err := putString(ds, "unit", unit); err != nil {
		ds.Close()
		return err
	}
	for i := 0; i+1 < len(attrs); i += 2 {
		if err := putString(ds, attrs[i], attrs[i+1]); err != nil {
			ds.Close()
			return err
		}
	}
	if err := ds.Close(); err != nil {
		return h5fail("close dataset "+name, err)
	}
	return nil
}

// datasetShape opens dataset name in g and returns it with its shape.
func datasetShape(g *hdf5.Group, name string) (*hdf5.Dataset, []uint, error) {
	ds, err := g.OpenDataset(name)
	if err != nil {
		return nil, nil, h5fail("open dataset "+name, err)
	}
	sp := ds.Space()
	if sp == nil {
		e := h5fail("dataset "+name+": dataspace", nil)
		ds.Close()
		return nil, nil, e
	}
	defer sp.Close()
	if sp.SimpleExtentType() == hdf5.S_SCALAR {
		return ds, nil, nil
	}
	dims, _, err := sp.SimpleExtentDims()
	if err != nil {
		e := h5fail("dataset "+name+": shape", err)
		ds.Close()
		return nil, nil, e
	}
	return ds, dims, nil
}

// readDataset reads dataset name of g into dst after checking that its
// shape is want (nil for a scalar). It returns the dataset's unit.
func readDataset[T h5elem](g *hdf5.Group, name string, want []uint, dst []T) (unit string, err error) {
	ds, dims, err := datasetShape(g, name)
	if err != nil {
		return "", err
	}
	defer ds.Close()
	if !sameShape(dims, want) {
		return "", fmt.Errorf("dataset %s has shape %s, want %s", name, shapeString(dims), shapeString(want))
	}
	if len(dst) > 0 {
		if err := ds.Read(&dst); err != nil {
			return "", h5fail("read dataset "+name, err)
		}
	}
	if !hasAttr(ds, "unit") {
		return "", nil
	}
	return getString(ds, "unit")
}

func sameShape(a, b []uint) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func shapeString(d []uint) string {
	if len(d) == 0 {
		return "scalar"
	}
	s := make([]string, len(d))
	for i, v := range d {
		s[i] = fmt.Sprint(v)
	}
	return "[" + strings.Join(s, "×") + "]"
}

// groupMembers lists the names of the links in g, in the library's order
// (by name).
func groupMembers(g *hdf5.Group) ([]string, error) {
	n, err := g.NumObjects()
	if err != nil {
		return nil, h5fail("list group", err)
	}
	out := make([]string, 0, n)
	for i := uint(0); i < n; i++ {
		s, err := g.ObjectNameByIndex(i)
		if err != nil {
			return nil, h5fail("list group", err)
		}
		out = append(out, s)
	}
	return out, nil
}
