package outputs

import (
	"bufio"
	"encoding/xml"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// writeXDMF writes the XDMF sidecar of the snapshots: a temporal collection
// of uniform grids, one per snapshot, each a 2DCoRectMesh of Ny × Nx nodes
// at the grid points (origin 0, spacing Lx/Nx and Ly/Ny, in reduced length
// units) carrying every field as a node-centred scalar attribute read from
// the snapshot's own HDF5 file. XDMF lists sizes and origin/spacing slowest
// axis first, so as (y, x).
func writeXDMF(w io.Writer, g Grid, sc Scales, names, units []string, snaps []snapEntry) error {
	b := bufio.NewWriter(w)
	esc := func(s string) string {
		var sb strings.Builder
		xml.EscapeText(&sb, []byte(s))
		return sb.String()
	}
	num := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	dx, dy := g.Lx/float64(g.Nx), g.Ly/float64(g.Ny)
	fmt.Fprintf(b, `<?xml version="1.0" encoding="UTF-8"?>
<!DOCTYPE Xdmf SYSTEM "Xdmf.dtd" []>
<Xdmf Version="2.0">
  <Domain>
    <Information Name="about" Value="memix snapshots: model predictions in reduced units; see snapshots.h5 for the SI scales"/>
    <Information Name="time_unit" Value="%s"/>
    <Information Name="length_unit" Value="%s"/>
    <Grid Name="snapshots" GridType="Collection" CollectionType="Temporal">
`, esc(sc.TimeUnit), esc(sc.LengthUnit))
	for i, s := range snaps {
		file := snapshotFile(i)
		fmt.Fprintf(b, `      <Grid Name="%s" GridType="Uniform">
        <Time Value="%s"/>
        <Information Name="step" Value="%d"/>
        <Topology TopologyType="2DCoRectMesh" Dimensions="%d %d"/>
        <Geometry GeometryType="ORIGIN_DXDY">
          <DataItem Name="Origin" Dimensions="2" NumberType="Float" Precision="8" Format="XML">0 0</DataItem>
          <DataItem Name="Spacing" Dimensions="2" NumberType="Float" Precision="8" Format="XML">%s %s</DataItem>
        </Geometry>
`, snapshotLink(i), num(s.time), s.step, g.Ny, g.Nx, num(dy), num(dx))
		for k, name := range names {
			fmt.Fprintf(b, `        <Attribute Name="%s" AttributeType="Scalar" Center="Node">
          <Information Name="unit" Value="%s"/>
          <DataItem Dimensions="%d %d" NumberType="Float" Precision="8" Format="HDF">%s:/fields/%s</DataItem>
        </Attribute>
`, esc(name), esc(units[k]), g.Ny, g.Nx, esc(file), esc(name))
		}
		b.WriteString("      </Grid>\n")
	}
	b.WriteString("    </Grid>\n  </Domain>\n</Xdmf>\n")
	return b.Flush()
}
