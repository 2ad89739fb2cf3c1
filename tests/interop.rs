//! Per-cell fields to and from `.npy` files (feature `npy`) and `ndarray` arrays (feature
//! `ndarray`).
//!
//! Sources the checks stand on, none written by this project:
//! * The `.npy` format as NumPy describes it (`numpy.lib.format`; quoted here from memory):
//!   the magic string `\x93NUMPY`, one byte each of major and minor version, for version 1.0
//!   a 2-byte little-endian header length, then an ASCII Python dict literal with the keys
//!   `'descr'` (e.g. `'<f8'`: `<` little-endian, `f` float, `8` bytes), `'fortran_order'` and
//!   `'shape'` (a tuple), padded with spaces and ended by `\n` so that magic, version, length
//!   and header together take a multiple of 64 bytes (16 in older writers); the raw values
//!   follow, in C order unless `fortran_order` is true. Files built byte by byte below follow
//!   that description, not quintet's writer.
//! * The `npyz` crate, a maintained reader and writer of the format: round trips.
//! * `ndarray`'s documented indexing: `a[[r, c]]` is row `r`, column `c`, and a standard
//!   (C-order) array stores row after row.
//! * IEEE 754 binary64/binary32 little-endian byte layouts (`f64::to_le_bytes`).
#![cfg(any(feature = "npy", feature = "ndarray"))]

#[cfg(feature = "npy")]
mod npy {
    use std::path::PathBuf;

    use quintet::{interop, ErrorKind, Grid, Location};

    /// A fresh path for `name` in the test's scratch directory.
    fn scratch(name: &str) -> PathBuf {
        let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("interop");
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join(name);
        let _ = std::fs::remove_file(&path);
        path
    }

    /// A version 1.0 `.npy` file with header dict `dict` and raw `data`, built by hand from the
    /// format description (from memory, see the file's docs): magic, version, `u16`
    /// little-endian header length, the dict padded with spaces and ended by `\n` to a multiple
    /// of 64 bytes.
    fn npy_v1(dict: &str, data: &[u8]) -> Vec<u8> {
        let mut header = dict.as_bytes().to_vec();
        let unpadded = 10 + header.len() + 1;
        header.resize(header.len() + (64 - unpadded % 64) % 64, b' ');
        header.push(b'\n');
        let mut bytes = b"\x93NUMPY\x01\x00".to_vec();
        bytes.extend_from_slice(&u16::try_from(header.len()).unwrap().to_le_bytes());
        bytes.extend_from_slice(&header);
        assert_eq!(bytes.len() % 64, 0);
        bytes.extend_from_slice(data);
        bytes
    }

    fn le_f64(values: &[f64]) -> Vec<u8> {
        values.iter().flat_map(|v| v.to_le_bytes()).collect()
    }

    fn le_f32(values: &[f32]) -> Vec<u8> {
        values.iter().flat_map(|v| v.to_le_bytes()).collect()
    }

    /// A 3 × 2 field whose value names its cell: `10·j + i`.
    fn labelled(grid: Grid) -> Vec<f64> {
        (0..grid.cells())
            .map(|k| {
                let (i, j) = grid.coords(k);
                (10 * j + i) as f64
            })
            .collect()
    }

    #[test]
    fn f64_round_trip_is_bit_exact() {
        // Values chosen to expose any conversion: signed zero, subnormal, extremes.
        let specials = [
            -0.0,
            f64::MIN_POSITIVE / 8.0,
            f64::MAX,
            f64::MIN,
            std::f64::consts::PI,
            1.0 + f64::EPSILON,
        ];
        for (nx, ny) in [(3, 2), (1, 1), (1, 7), (17, 5)] {
            let grid = Grid::new(nx, ny).unwrap();
            let x: Vec<f64> = (0..grid.cells())
                .map(|k| specials[k % specials.len()] * if k % 2 == 0 { 1.0 } else { -0.5 })
                .collect();
            let path = scratch(&format!("f64-{nx}x{ny}.npy"));
            interop::write_npy(&path, grid, &x).unwrap();
            let back: Vec<f64> = interop::read_npy(&path, grid).unwrap();
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&back), bits(&x));
            let (found, again) = interop::read_npy_grid::<f64>(&path).unwrap();
            assert_eq!(found, grid);
            assert_eq!(bits(&again), bits(&x));
        }
    }

    #[test]
    fn f32_round_trip_is_bit_exact() {
        let specials = [
            -0.0_f32,
            f32::MIN_POSITIVE / 8.0,
            f32::MAX,
            f32::MIN,
            0.1,
            1.0 + f32::EPSILON,
        ];
        for (nx, ny) in [(3, 2), (2, 3), (31, 4)] {
            let grid = Grid::new(nx, ny).unwrap();
            let x: Vec<f32> = (0..grid.cells())
                .map(|k| specials[k % specials.len()])
                .collect();
            let path = scratch(&format!("f32-{nx}x{ny}.npy"));
            interop::write_npy(&path, grid, &x).unwrap();
            let back: Vec<f32> = interop::read_npy(&path, grid).unwrap();
            let bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(&back), bits(&x));
        }
    }

    /// The header and data of a file quintet writes, byte by byte against the format
    /// description (from memory, see the file's docs).
    #[test]
    fn written_file_has_the_documented_layout() {
        let grid = Grid::new(3, 2).unwrap();
        let x = labelled(grid);
        let path = scratch("layout-f64.npy");
        interop::write_npy(&path, grid, &x).unwrap();
        let bytes = std::fs::read(&path).unwrap();

        assert_eq!(&bytes[..6], b"\x93NUMPY", "magic string");
        assert_eq!(&bytes[6..8], &[1, 0], "version 1.0");
        let header_len = usize::from(u16::from_le_bytes([bytes[8], bytes[9]]));
        let data_start = 10 + header_len;
        assert_eq!(
            data_start % 64,
            0,
            "header padded to a multiple of 64 bytes"
        );
        let header = std::str::from_utf8(&bytes[10..data_start]).unwrap();
        assert!(header.is_ascii() && header.ends_with('\n'), "{header:?}");
        let dict: String = header.chars().filter(|c| !c.is_whitespace()).collect();
        assert!(dict.starts_with('{') && dict.ends_with('}'), "{dict}");
        assert!(dict.contains("'descr':'<f8'"), "{dict}");
        assert!(dict.contains("'fortran_order':False"), "{dict}");
        // Shape (ny, nx) = (2, 3); a trailing comma inside the tuple is valid Python.
        assert!(
            dict.contains("'shape':(2,3)") || dict.contains("'shape':(2,3,)"),
            "{dict}"
        );

        // C order: row j = 0 (south) first, i growing within the row: exactly grid order.
        assert_eq!(&bytes[data_start..], le_f64(&x).as_slice());
        assert_eq!(
            &bytes[data_start..data_start + 8],
            &[0, 0, 0, 0, 0, 0, 0, 0],
            "cell (0, 0) = 0.0"
        );
        // Cell (i = 2, j = 1) is NumPy's a[1, 2], entry 1·3 + 2 = 5: the value 12.0.
        assert_eq!(
            &bytes[data_start + 40..data_start + 48],
            &12.0_f64.to_le_bytes()
        );

        // f32: '<f4' and 4-byte values.
        let x32: Vec<f32> = x.iter().map(|&v| v as f32).collect();
        let path = scratch("layout-f32.npy");
        interop::write_npy(&path, grid, &x32).unwrap();
        let bytes = std::fs::read(&path).unwrap();
        let data_start = 10 + usize::from(u16::from_le_bytes([bytes[8], bytes[9]]));
        let dict: String = std::str::from_utf8(&bytes[10..data_start])
            .unwrap()
            .chars()
            .filter(|c| !c.is_whitespace())
            .collect();
        assert!(dict.contains("'descr':'<f4'"), "{dict}");
        assert_eq!(&bytes[data_start..], le_f32(&x32).as_slice());
    }

    /// A file in NumPy's own header style, built by hand, reads into grid order.
    #[test]
    fn hand_built_file_reads_in_grid_order() {
        let grid = Grid::new(3, 2).unwrap();
        // NumPy's a = [[0, 1, 2], [10, 11, 12]]: row j, column i, value 10·j + i.
        let data = le_f64(&[0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
        let path = scratch("hand-c.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }",
                &data,
            ),
        )
        .unwrap();
        let x: Vec<f64> = interop::read_npy(&path, grid).unwrap();
        assert_eq!(x, labelled(grid));
        assert_eq!(x[grid.index(2, 1)], 12.0);
        let (found, _) = interop::read_npy_grid::<f64>(&path).unwrap();
        assert_eq!((found.nx(), found.ny()), (3, 2));

        // Big-endian values ('>f8') give the same field.
        let be: Vec<u8> = [0.0_f64, 1.0, 2.0, 10.0, 11.0, 12.0]
            .iter()
            .flat_map(|v| v.to_be_bytes())
            .collect();
        let path = scratch("hand-be.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '>f8', 'fortran_order': False, 'shape': (2, 3), }",
                &be,
            ),
        )
        .unwrap();
        assert_eq!(
            interop::read_npy::<f64>(&path, grid).unwrap(),
            labelled(grid)
        );

        // Fortran order stores the same array column by column: a[0,0], a[1,0], a[0,1], …
        let fortran = le_f64(&[0.0, 10.0, 1.0, 11.0, 2.0, 12.0]);
        let path = scratch("hand-fortran.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f8', 'fortran_order': True, 'shape': (2, 3), }",
                &fortran,
            ),
        )
        .unwrap();
        assert_eq!(
            interop::read_npy::<f64>(&path, grid).unwrap(),
            labelled(grid)
        );

        // f32 the same way.
        let data = le_f32(&[0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
        let path = scratch("hand-f32.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }",
                &data,
            ),
        )
        .unwrap();
        let x: Vec<f32> = interop::read_npy(&path, grid).unwrap();
        assert_eq!(x, [0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
    }

    #[test]
    fn wrong_shape_is_a_grid_mismatch() {
        let grid = Grid::new(3, 2).unwrap();
        let path = scratch("shape.npy");
        interop::write_npy(&path, grid, &labelled(grid)).unwrap();

        let transposed = Grid::new(2, 3).unwrap();
        let e = interop::read_npy::<f64>(&path, transposed).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::GridMismatch);
        let message = e.to_string();
        assert!(message.contains("shape (2, 3)"), "{message}");
        assert!(message.contains("(ny, nx) = (3, 2)"), "{message}");
        assert!(message.contains("looks transposed"), "{message}");

        let e = interop::read_npy::<f64>(&path, Grid::new(4, 2).unwrap()).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::GridMismatch);
        assert!(!e.to_string().contains("transposed"), "{e}");
        assert!(e.context()[0].contains("shape.npy"), "{:?}", e.context());
    }

    #[test]
    fn arrays_that_are_not_2d_are_refused() {
        let data = le_f64(&[0.0; 6]);
        for (name, shape, shown) in [
            ("1d", "(6,)", "(6,)"),
            ("3d", "(1, 2, 3)", "(1, 2, 3)"),
            ("0d", "()", "()"),
        ] {
            let path = scratch(&format!("dims-{name}.npy"));
            let dict = format!("{{'descr': '<f8', 'fortran_order': False, 'shape': {shape}, }}");
            std::fs::write(&path, npy_v1(&dict, &data)).unwrap();
            for e in [
                interop::read_npy::<f64>(&path, Grid::new(3, 2).unwrap()).unwrap_err(),
                interop::read_npy_grid::<f64>(&path).unwrap_err(),
            ] {
                assert_eq!(e.kind(), ErrorKind::FileFormat, "{e}");
                assert!(e.to_string().contains(&format!("shape {shown}")), "{e}");
            }
        }
        // An axis of length zero is no grid.
        let path = scratch("dims-empty.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f8', 'fortran_order': False, 'shape': (0, 3), }",
                &[],
            ),
        )
        .unwrap();
        assert_eq!(
            interop::read_npy_grid::<f64>(&path).unwrap_err().kind(),
            ErrorKind::InvalidGrid
        );
    }

    #[test]
    fn wrong_element_type_is_a_format_error() {
        let grid = Grid::new(3, 2).unwrap();
        let path64 = scratch("dtype-f64.npy");
        interop::write_npy(&path64, grid, &labelled(grid)).unwrap();
        let path32 = scratch("dtype-f32.npy");
        interop::write_npy(&path32, grid, &[1.0_f32; 6]).unwrap();
        let path_i8 = scratch("dtype-i8.npy");
        let ints: Vec<u8> = (0..6_i64).flat_map(|v| v.to_le_bytes()).collect();
        std::fs::write(
            &path_i8,
            npy_v1(
                "{'descr': '<i8', 'fortran_order': False, 'shape': (2, 3), }",
                &ints,
            ),
        )
        .unwrap();

        let e = interop::read_npy::<f32>(&path64, grid).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::FileFormat);
        assert!(
            e.to_string().contains("'<f8'") && e.to_string().contains("f32"),
            "{e}"
        );
        let e = interop::read_npy::<f64>(&path32, grid).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::FileFormat);
        assert!(e.to_string().contains("'<f4'"), "{e}");
        let e = interop::read_npy::<f64>(&path_i8, grid).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::FileFormat);
        assert!(e.to_string().contains("'<i8'"), "{e}");
        assert_eq!(
            interop::read_npy_grid::<f64>(&path_i8).unwrap_err().kind(),
            ErrorKind::FileFormat
        );
    }

    #[test]
    fn non_finite_values_are_named_by_cell() {
        let grid = Grid::new(3, 2).unwrap();
        // NaN at NumPy's a[1, 2]: cell (i = 2, j = 1), index 5.
        let data = le_f64(&[0.0, 1.0, 2.0, 10.0, 11.0, f64::NAN]);
        let path = scratch("nan.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }",
                &data,
            ),
        )
        .unwrap();
        for e in [
            interop::read_npy::<f64>(&path, grid).unwrap_err(),
            interop::read_npy_grid::<f64>(&path).unwrap_err(),
        ] {
            assert_eq!(e.kind(), ErrorKind::NonFinite);
            assert_eq!(e.location(), Some(Location::on(grid, 5)));
            assert_eq!(e.location().unwrap().coords, Some((2, 1)));
            let message = e.to_string();
            assert!(message.contains("cell 5 (i = 2, j = 1)"), "{message}");
            assert!(message.contains("nan.npy"), "{message}");
        }

        // Fortran order: +∞ stored third, at a[0, 1] = cell (i = 1, j = 0), index 1; −∞ at
        // a[1, 2] comes later in grid order and is not the one named.
        let data = le_f32(&[0.0, 10.0, f32::INFINITY, 11.0, 2.0, f32::NEG_INFINITY]);
        let path = scratch("inf-fortran.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f4', 'fortran_order': True, 'shape': (2, 3), }",
                &data,
            ),
        )
        .unwrap();
        let e = interop::read_npy::<f32>(&path, grid).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::NonFinite);
        assert_eq!(e.location(), Some(Location::on(grid, 1)));

        // Writing refuses them before the file is created.
        let path = scratch("nan-write.npy");
        let mut x = labelled(grid);
        x[grid.index(0, 1)] = f64::NEG_INFINITY;
        let e = interop::write_npy(&path, grid, &x).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::NonFinite);
        assert_eq!(e.location().unwrap().coords, Some((0, 1)));
        assert!(!path.exists());
    }

    #[test]
    fn wrong_length_on_write() {
        let grid = Grid::new(3, 2).unwrap();
        let path = scratch("length.npy");
        let e = interop::write_npy(&path, grid, &[0.0_f64; 5]).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::LengthMismatch);
        assert!(!path.exists());
    }

    #[test]
    fn io_failures_keep_the_system_message_and_name_the_file() {
        let grid = Grid::new(3, 2).unwrap();
        let missing = scratch("no-such-file.npy");
        let os_message = std::fs::File::open(&missing).unwrap_err().to_string();
        let e = interop::read_npy::<f64>(&missing, grid).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::Io);
        assert!(e.to_string().contains(&os_message), "{e}");
        assert_eq!(e.context().len(), 1);
        assert!(
            e.context()[0].starts_with("reading ") && e.context()[0].contains("no-such-file.npy")
        );
        assert_eq!(
            interop::read_npy_grid::<f64>(&missing).unwrap_err().kind(),
            ErrorKind::Io
        );

        let no_dir = scratch("no-such-dir").join("field.npy");
        let e = interop::write_npy(&no_dir, grid, &labelled(grid)).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::Io);
        assert!(e.context()[0].starts_with("writing "), "{:?}", e.context());
    }

    #[test]
    fn damaged_files_are_format_errors() {
        let grid = Grid::new(3, 2).unwrap();
        let good = npy_v1(
            "{'descr': '<f8', 'fortran_order': False, 'shape': (2, 3), }",
            &le_f64(&[1.0; 6]),
        );
        let mut bad_magic = good.clone();
        bad_magic[1] = b'n';
        let truncated_data = good[..good.len() - 20].to_vec();
        let truncated_header = good[..30].to_vec();
        let mut bad_version = good.clone();
        bad_version[6] = 9;
        let no_dict = npy_v1("[1, 2, 3]", &le_f64(&[1.0; 6]));
        for (name, bytes) in [
            ("empty", Vec::new()),
            ("text", b"0.0 1.0 2.0\n3.0 4.0 5.0\n".to_vec()),
            ("magic", bad_magic),
            ("version", bad_version),
            ("truncated-data", truncated_data),
            ("truncated-header", truncated_header),
            ("no-dict", no_dict),
        ] {
            let path = scratch(&format!("damaged-{name}.npy"));
            std::fs::write(&path, bytes).unwrap();
            let e = interop::read_npy::<f64>(&path, grid).unwrap_err();
            assert_eq!(e.kind(), ErrorKind::FileFormat, "{name}: {e}");
            assert!(
                e.context()[0].contains(&format!("damaged-{name}.npy")),
                "{name}"
            );
        }

        // A header that promises far more values than the file holds is refused before any
        // memory is reserved for them.
        let path = scratch("damaged-huge-shape.npy");
        std::fs::write(
            &path,
            npy_v1(
                "{'descr': '<f8', 'fortran_order': False, 'shape': (1000000, 1000000), }",
                &le_f64(&[1.0; 6]),
            ),
        )
        .unwrap();
        let e = interop::read_npy_grid::<f64>(&path).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::FileFormat, "{e}");
        assert!(e.to_string().contains("fewer than"), "{e}");
    }
}

#[cfg(feature = "ndarray")]
mod array {
    use ndarray::{s, Array2, ShapeBuilder};
    use quintet::{interop, ErrorKind, Grid};

    /// Every cell of a non-square grid: `view[[j, i]] == x[i + nx·j]`, axis 0 north, axis 1
    /// east.
    #[test]
    fn view_axes_are_j_then_i() {
        let grid = Grid::new(3, 2).unwrap();
        let x: Vec<f64> = (0..grid.cells()).map(|k| k as f64 * 1.5).collect();
        let view = interop::as_array(grid, &x).unwrap();
        assert_eq!(view.dim(), (grid.ny(), grid.nx()));
        assert_eq!(view.shape(), &[2, 3]);
        for j in 0..grid.ny() {
            for i in 0..grid.nx() {
                assert_eq!(view[[j, i]], x[i + grid.nx() * j], "(i, j) = ({i}, {j})");
            }
        }
        // Row 0 is the southmost row of cells (j = 0), column 0 the westmost (i = 0).
        assert_eq!(view.row(0).to_vec(), vec![0.0, 1.5, 3.0]);
        assert_eq!(view.column(0).to_vec(), vec![0.0, 4.5]);
        // No copy: the view's first element is the slice's.
        assert!(std::ptr::eq(view.as_ptr(), x.as_ptr()));
        assert!(view.is_standard_layout());
    }

    #[test]
    fn mutable_view_writes_through() {
        let grid = Grid::new(3, 2).unwrap();
        let mut x = vec![0_i32; grid.cells()];
        let base = x.as_ptr();
        {
            let mut view = interop::as_array_mut(grid, &mut x).unwrap();
            assert!(std::ptr::eq(view.as_ptr(), base));
            for ((j, i), v) in view.indexed_iter_mut() {
                *v = (10 * j + i) as i32;
            }
        }
        for (k, &v) in x.iter().enumerate() {
            let (i, j) = grid.coords(k);
            assert_eq!(v, (10 * j + i) as i32);
        }
    }

    #[test]
    fn wrong_length_is_a_length_mismatch() {
        let grid = Grid::new(3, 2).unwrap();
        let e = interop::as_array(grid, &[0.0; 7]).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::LengthMismatch);
        assert!(e.to_string().contains("7 entries given, 6 needed"), "{e}");
        let e = interop::as_array_mut(grid, &mut [0.0; 5]).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::LengthMismatch);
    }

    #[test]
    fn owned_array_becomes_a_grid_ordered_vec() {
        // a[[j, i]] = 10·j + i on 2 rows (north) × 3 columns (east).
        let a = Array2::from_shape_fn((2, 3), |(j, i)| (10 * j + i) as f64);
        let buffer = a.as_ptr();
        let (grid, x) = interop::from_array(a).unwrap();
        assert_eq!((grid.nx(), grid.ny()), (3, 2));
        assert_eq!(x, [0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
        // Standard layout: the buffer is handed over, not copied.
        assert!(std::ptr::eq(x.as_ptr(), buffer));

        // Fortran layout, transposed and sliced arrays give the same grid order.
        let f = Array2::from_shape_fn((2, 3).f(), |(j, i)| (10 * j + i) as f64);
        assert!(!f.is_standard_layout());
        assert_eq!(interop::from_array(f).unwrap().1, x);
        let t = Array2::from_shape_fn((3, 2), |(i, j)| (10 * j + i) as f64).reversed_axes();
        assert_eq!(interop::from_array(t).unwrap().1, x);
        let big = Array2::from_shape_fn((4, 5), |(j, i)| (10 * j + i) as f64 - 11.0);
        let inner = big.slice_move(s![1..3, 1..4]);
        assert_eq!(interop::from_array(inner).unwrap().1, x);
        let rows = Array2::from_shape_fn((4, 3), |(j, i)| (10 * j + i) as f64 - 10.0);
        let middle = rows.slice_move(s![1..3, ..]);
        assert!(middle.is_standard_layout());
        assert_eq!(interop::from_array(middle).unwrap().1, x);

        // The round trip through a view.
        let (grid, x) =
            interop::from_array(interop::as_array(grid, &x).unwrap().to_owned()).unwrap();
        assert_eq!(interop::as_array(grid, &x).unwrap()[[1, 2]], 12.0);
    }

    #[test]
    fn empty_array_is_no_grid() {
        let e = interop::from_array(Array2::<f64>::zeros((0, 4))).unwrap_err();
        assert_eq!(e.kind(), ErrorKind::InvalidGrid);
    }
}

/// The two features together: a field written to `.npy` and read back lands where a view of
/// the original puts it.
#[cfg(all(feature = "npy", feature = "ndarray"))]
#[test]
fn npy_and_views_agree_on_orientation() {
    use quintet::{interop, Grid};
    let grid = Grid::new(4, 3).unwrap();
    let x: Vec<f64> = (0..grid.cells()).map(|k| (k * k) as f64).collect();
    let dir = std::path::PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("interop");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("both.npy");
    interop::write_npy(&path, grid, &x).unwrap();
    let back: Vec<f64> = interop::read_npy(&path, grid).unwrap();
    let view = interop::as_array(grid, &back).unwrap();
    for (k, &v) in x.iter().enumerate() {
        let (i, j) = grid.coords(k);
        assert_eq!(view[[j, i]], v);
    }
}
