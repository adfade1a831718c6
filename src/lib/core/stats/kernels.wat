;; Inner loops of the posterior summaries and the corner-plot densities, in float64 lanes of 2
;; (WebAssembly SIMD). Each lane computes one output with exactly the operations, in exactly the
;; order, of the scalar loop it replaces (see simd.ts), so the results are the same bits as that
;; loop; the lanes only let two outputs share the instructions. Addresses are byte offsets into
;; the module's own memory, every array float64.
(module
  (memory (export "memory") 16)

  ;; Binned-KDE convolution at the grid nodes L + g r, g = 0 .. G - 1, of a mesh with a symmetric
  ;; kernel of taps ker[0 .. L]:
  ;;   out[g] = ker[0] mesh[at] + sum_{d = 1 .. L} ker[d] (mesh[at - d] + mesh[at + d]),  at = L + g r,
  ;; summed in that order. Lanes hold g and g + 1 (their nodes are r apart).
  (func (export "convSym")
    (param $pMesh i32) (param $pKer i32) (param $pOut i32) (param $G i32) (param $L i32) (param $r i32)
    (local $g i32) (local $d i32) (local $at i32) (local $pa i32) (local $pb i32) (local $pk i32)
    (local $rb i32) (local $s v128) (local $a v128) (local $b v128) (local $x f64) (local $k0 f64)
    (local $s1 v128) (local $s2 v128) (local $s3 v128)
    (local.set $k0 (f64.load (local.get $pKer)))
    (local.set $rb (i32.shl (local.get $r) (i32.const 3)))
    (local.set $g (i32.const 0))
    ;; r = 1: four pairs of nodes at a time (four independent sums, so their additions overlap)
    (if (i32.eq (local.get $r) (i32.const 1))
      (then
        (block $quads (loop $quad
          (br_if $quads (i32.ge_u (i32.add (local.get $g) (i32.const 7)) (local.get $G)))
          (local.set $at (i32.add (local.get $pMesh) (i32.shl (i32.add (local.get $L) (local.get $g)) (i32.const 3))))
          (local.set $b (f64x2.splat (local.get $k0)))
          (local.set $s (f64x2.mul (local.get $b) (v128.load (local.get $at))))
          (local.set $s1 (f64x2.mul (local.get $b) (v128.load offset=16 (local.get $at))))
          (local.set $s2 (f64x2.mul (local.get $b) (v128.load offset=32 (local.get $at))))
          (local.set $s3 (f64x2.mul (local.get $b) (v128.load offset=48 (local.get $at))))
          (local.set $pa (i32.sub (local.get $at) (i32.const 8)))
          (local.set $pb (i32.add (local.get $at) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pKer) (i32.const 8)))
          (local.set $d (i32.const 1))
          (block $qtaps (loop $qtap
            (br_if $qtaps (i32.gt_u (local.get $d) (local.get $L)))
            (local.set $a (v128.load64_splat (local.get $pk)))
            (local.set $s (f64x2.add (local.get $s)
              (f64x2.mul (local.get $a) (f64x2.add (v128.load (local.get $pa)) (v128.load (local.get $pb))))))
            (local.set $s1 (f64x2.add (local.get $s1)
              (f64x2.mul (local.get $a) (f64x2.add (v128.load offset=16 (local.get $pa)) (v128.load offset=16 (local.get $pb))))))
            (local.set $s2 (f64x2.add (local.get $s2)
              (f64x2.mul (local.get $a) (f64x2.add (v128.load offset=32 (local.get $pa)) (v128.load offset=32 (local.get $pb))))))
            (local.set $s3 (f64x2.add (local.get $s3)
              (f64x2.mul (local.get $a) (f64x2.add (v128.load offset=48 (local.get $pa)) (v128.load offset=48 (local.get $pb))))))
            (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
            (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
            (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
            (local.set $d (i32.add (local.get $d) (i32.const 1)))
            (br $qtap)))
          (local.set $pa (i32.add (local.get $pOut) (i32.shl (local.get $g) (i32.const 3))))
          (v128.store (local.get $pa) (local.get $s))
          (v128.store offset=16 (local.get $pa) (local.get $s1))
          (v128.store offset=32 (local.get $pa) (local.get $s2))
          (v128.store offset=48 (local.get $pa) (local.get $s3))
          (local.set $g (i32.add (local.get $g) (i32.const 8)))
          (br $quad)))))
    (block $pairs (loop $pair
      (br_if $pairs (i32.ge_u (i32.add (local.get $g) (i32.const 1)) (local.get $G)))
      ;; byte address of mesh[L + g r]
      (local.set $at (i32.add (local.get $pMesh)
        (i32.shl (i32.add (local.get $L) (i32.mul (local.get $g) (local.get $r))) (i32.const 3))))
      (if (i32.eq (local.get $r) (i32.const 1))
        (then
          (local.set $s (f64x2.mul (f64x2.splat (local.get $k0)) (v128.load (local.get $at))))
          (local.set $pa (i32.sub (local.get $at) (i32.const 8)))
          (local.set $pb (i32.add (local.get $at) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pKer) (i32.const 8)))
          (local.set $d (i32.const 1))
          (block $taps (loop $tap
            (br_if $taps (i32.gt_u (local.get $d) (local.get $L)))
            (local.set $s (f64x2.add (local.get $s)
              (f64x2.mul (v128.load64_splat (local.get $pk))
                (f64x2.add (v128.load (local.get $pa)) (v128.load (local.get $pb))))))
            (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
            (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
            (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
            (local.set $d (i32.add (local.get $d) (i32.const 1)))
            (br $tap))))
        (else
          ;; lanes r nodes apart: gather each pair of mesh values from two loads
          (local.set $a (f64x2.splat (f64.load (local.get $at))))
          (local.set $a (f64x2.replace_lane 1 (local.get $a) (f64.load (i32.add (local.get $at) (local.get $rb)))))
          (local.set $s (f64x2.mul (f64x2.splat (local.get $k0)) (local.get $a)))
          (local.set $pa (i32.sub (local.get $at) (i32.const 8)))
          (local.set $pb (i32.add (local.get $at) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pKer) (i32.const 8)))
          (local.set $d (i32.const 1))
          (block $taps2 (loop $tap2
            (br_if $taps2 (i32.gt_u (local.get $d) (local.get $L)))
            (local.set $a (f64x2.splat (f64.load (local.get $pa))))
            (local.set $a (f64x2.replace_lane 1 (local.get $a) (f64.load (i32.add (local.get $pa) (local.get $rb)))))
            (local.set $b (f64x2.splat (f64.load (local.get $pb))))
            (local.set $b (f64x2.replace_lane 1 (local.get $b) (f64.load (i32.add (local.get $pb) (local.get $rb)))))
            (local.set $s (f64x2.add (local.get $s)
              (f64x2.mul (v128.load64_splat (local.get $pk)) (f64x2.add (local.get $a) (local.get $b)))))
            (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
            (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
            (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
            (local.set $d (i32.add (local.get $d) (i32.const 1)))
            (br $tap2)))))
      (v128.store (i32.add (local.get $pOut) (i32.shl (local.get $g) (i32.const 3))) (local.get $s))
      (local.set $g (i32.add (local.get $g) (i32.const 2)))
      (br $pair)))
    ;; an odd last node, one lane's worth in scalar float64
    (if (i32.lt_u (local.get $g) (local.get $G))
      (then
        (local.set $at (i32.add (local.get $pMesh)
          (i32.shl (i32.add (local.get $L) (i32.mul (local.get $g) (local.get $r))) (i32.const 3))))
        (local.set $x (f64.mul (local.get $k0) (f64.load (local.get $at))))
        (local.set $d (i32.const 1))
        (block $taps3 (loop $tap3
          (br_if $taps3 (i32.gt_u (local.get $d) (local.get $L)))
          (local.set $x (f64.add (local.get $x)
            (f64.mul (f64.load (i32.add (local.get $pKer) (i32.shl (local.get $d) (i32.const 3))))
              (f64.add
                (f64.load (i32.sub (local.get $at) (i32.shl (local.get $d) (i32.const 3))))
                (f64.load (i32.add (local.get $at) (i32.shl (local.get $d) (i32.const 3))))))))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $tap3)))
        (f64.store (i32.add (local.get $pOut) (i32.shl (local.get $g) (i32.const 3))) (local.get $x)))))

  ;; Weighted cross products for a covariance matrix: for a = 0 .. k - 1 and b = a rounded down to
  ;; even .. kk - 1 (kk = k rounded up to even),
  ;;   out[a kk + b] = sum_{i = 0 .. n - 1} t[a n + i] u[i kk + b],
  ;; summed in order of i. t holds w_i (x_ai - m_a) by parameter, u holds x_bi - m_b by draw
  ;; (row stride kk, the padding column zero). Lanes hold b and b + 1; up to four pairs of b are
  ;; summed side by side (independent sums, so their additions overlap).
  (func (export "crossProducts")
    (param $pT i32) (param $pU i32) (param $n i32) (param $k i32) (param $kk i32) (param $pOut i32)
    (local $a i32) (local $b i32) (local $i i32) (local $pt i32) (local $pu i32) (local $strideU i32)
    (local $t v128) (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $po i32)
    (local.set $strideU (i32.shl (local.get $kk) (i32.const 3)))
    (local.set $a (i32.const 0))
    (block $rows (loop $row
      (br_if $rows (i32.ge_u (local.get $a) (local.get $k)))
      (local.set $b (i32.and (local.get $a) (i32.const -2)))
      ;; four pairs at a time
      (block $quads (loop $quad
        (br_if $quads (i32.gt_u (i32.add (local.get $b) (i32.const 8)) (local.get $kk)))
        (local.set $s0 (v128.const f64x2 0 0))
        (local.set $s1 (v128.const f64x2 0 0))
        (local.set $s2 (v128.const f64x2 0 0))
        (local.set $s3 (v128.const f64x2 0 0))
        (local.set $pt (i32.add (local.get $pT) (i32.shl (i32.mul (local.get $a) (local.get $n)) (i32.const 3))))
        (local.set $pu (i32.add (local.get $pU) (i32.shl (local.get $b) (i32.const 3))))
        (local.set $i (i32.const 0))
        (block $draws4 (loop $draw4
          (br_if $draws4 (i32.ge_u (local.get $i) (local.get $n)))
          (local.set $t (v128.load64_splat (local.get $pt)))
          (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $t) (v128.load (local.get $pu)))))
          (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $t) (v128.load offset=16 (local.get $pu)))))
          (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $t) (v128.load offset=32 (local.get $pu)))))
          (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $t) (v128.load offset=48 (local.get $pu)))))
          (local.set $pt (i32.add (local.get $pt) (i32.const 8)))
          (local.set $pu (i32.add (local.get $pu) (local.get $strideU)))
          (local.set $i (i32.add (local.get $i) (i32.const 1)))
          (br $draw4)))
        (local.set $po (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $a) (local.get $kk)) (local.get $b)) (i32.const 3))))
        (v128.store (local.get $po) (local.get $s0))
        (v128.store offset=16 (local.get $po) (local.get $s1))
        (v128.store offset=32 (local.get $po) (local.get $s2))
        (v128.store offset=48 (local.get $po) (local.get $s3))
        (local.set $b (i32.add (local.get $b) (i32.const 8)))
        (br $quad)))
      ;; the remaining pairs one at a time
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $b) (local.get $kk)))
        (local.set $s0 (v128.const f64x2 0 0))
        (local.set $pt (i32.add (local.get $pT) (i32.shl (i32.mul (local.get $a) (local.get $n)) (i32.const 3))))
        (local.set $pu (i32.add (local.get $pU) (i32.shl (local.get $b) (i32.const 3))))
        (local.set $i (i32.const 0))
        (block $draws (loop $draw
          (br_if $draws (i32.ge_u (local.get $i) (local.get $n)))
          (local.set $s0 (f64x2.add (local.get $s0)
            (f64x2.mul (v128.load64_splat (local.get $pt)) (v128.load (local.get $pu)))))
          (local.set $pt (i32.add (local.get $pt) (i32.const 8)))
          (local.set $pu (i32.add (local.get $pu) (local.get $strideU)))
          (local.set $i (i32.add (local.get $i) (i32.const 1)))
          (br $draw)))
        (v128.store
          (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $a) (local.get $kk)) (local.get $b)) (i32.const 3)))
          (local.get $s0))
        (local.set $b (i32.add (local.get $b) (i32.const 2)))
        (br $col)))
      (local.set $a (i32.add (local.get $a) (i32.const 1)))
      (br $row))))

  ;; Separable smoothing of a grid of ny rows and nx columns (nx even) held with padding:
  ;; row stride sx = nx + 2 Lx (Lx zero columns each side), Ly zero rows above and below. Pass 1
  ;; smooths each row with the symmetric taps kx[0 .. Lx] into tmp (same layout, rows only);
  ;; pass 2 smooths the columns of tmp with ky[0 .. Ly] into out (ny rows of nx at row stride so):
  ;;   v = k[0] c + sum_{d = 1 .. L} k[d] (left_d + right_d),
  ;; and writes the output's sum and largest value at pStats.
  ;; tmp's padding rows must be zero; pass 1 writes only its central columns.
  (func (export "smooth2d")
    (param $pIn i32) (param $pTmp i32) (param $pOut i32) (param $nx i32) (param $ny i32)
    (param $pKx i32) (param $lx i32) (param $pKy i32) (param $ly i32) (param $so i32) (param $pStats i32)
    (local $sx i32) (local $j i32) (local $i i32) (local $d i32) (local $row i32) (local $c i32) (local $pc i32)
    (local $pa i32) (local $pb i32) (local $pk i32) (local $strideB i32) (local $t v128)
    (local $s0 v128) (local $s1 v128) (local $s2 v128) (local $s3 v128) (local $sum v128) (local $max v128)
    (local.set $sx (i32.add (local.get $nx) (i32.shl (local.get $lx) (i32.const 1))))
    (local.set $strideB (i32.shl (local.get $sx) (i32.const 3)))
    ;; pass 1: rows ly .. ly + ny - 1 of the padded grid, eight columns (four independent pairs) at a time, then pairs
    (local.set $j (i32.const 0))
    (block $rows (loop $rowl
      (br_if $rows (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $row (i32.mul (i32.add (local.get $j) (local.get $ly)) (local.get $strideB)))
      (local.set $i (i32.const 0))
      (block $quads (loop $quad
        (br_if $quads (i32.gt_u (i32.add (local.get $i) (i32.const 8)) (local.get $nx)))
        (local.set $c (i32.add (local.get $row) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $pc (i32.add (local.get $pIn) (local.get $c)))
        (local.set $t (v128.load64_splat (local.get $pKx)))
        (local.set $s0 (f64x2.mul (local.get $t) (v128.load offset=0 (local.get $pc))))
        (local.set $s1 (f64x2.mul (local.get $t) (v128.load offset=16 (local.get $pc))))
        (local.set $s2 (f64x2.mul (local.get $t) (v128.load offset=32 (local.get $pc))))
        (local.set $s3 (f64x2.mul (local.get $t) (v128.load offset=48 (local.get $pc))))
        (local.set $pa (i32.sub (local.get $pc) (i32.const 8)))
        (local.set $pb (i32.add (local.get $pc) (i32.const 8)))
        (local.set $pk (i32.add (local.get $pKx) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $taps4 (loop $tap4
          (br_if $taps4 (i32.gt_u (local.get $d) (local.get $lx)))
          (local.set $t (v128.load64_splat (local.get $pk)))
          (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=0 (local.get $pa)) (v128.load offset=0 (local.get $pb))))))
          (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=16 (local.get $pa)) (v128.load offset=16 (local.get $pb))))))
          (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=32 (local.get $pa)) (v128.load offset=32 (local.get $pb))))))
          (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=48 (local.get $pa)) (v128.load offset=48 (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
          (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $tap4)))
        (local.set $pc (i32.add (local.get $pTmp) (local.get $c)))
        (v128.store offset=0 (local.get $pc) (local.get $s0))
        (v128.store offset=16 (local.get $pc) (local.get $s1))
        (v128.store offset=32 (local.get $pc) (local.get $s2))
        (v128.store offset=48 (local.get $pc) (local.get $s3))
        (local.set $i (i32.add (local.get $i) (i32.const 8)))
        (br $quad)))
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $c (i32.add (local.get $row) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $pc (i32.add (local.get $pIn) (local.get $c)))
        (local.set $t (v128.load64_splat (local.get $pKx)))
        (local.set $s0 (f64x2.mul (local.get $t) (v128.load offset=0 (local.get $pc))))
        (local.set $pa (i32.sub (local.get $pc) (i32.const 8)))
        (local.set $pb (i32.add (local.get $pc) (i32.const 8)))
        (local.set $pk (i32.add (local.get $pKx) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $taps1 (loop $tap1
          (br_if $taps1 (i32.gt_u (local.get $d) (local.get $lx)))
          (local.set $t (v128.load64_splat (local.get $pk)))
          (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=0 (local.get $pa)) (v128.load offset=0 (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
          (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $tap1)))
        (local.set $pc (i32.add (local.get $pTmp) (local.get $c)))
        (v128.store offset=0 (local.get $pc) (local.get $s0))
        (local.set $i (i32.add (local.get $i) (i32.const 2)))
        (br $col)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl)))
    ;; pass 2: columns of tmp into out, the same way
    (local.set $j (i32.const 0))
    (block $rows2 (loop $rowl2
      (br_if $rows2 (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $row (i32.mul (i32.add (local.get $j) (local.get $ly)) (local.get $strideB)))
      (local.set $i (i32.const 0))
      (block $cquads (loop $cquad
        (br_if $cquads (i32.gt_u (i32.add (local.get $i) (i32.const 8)) (local.get $nx)))
        (local.set $c (i32.add (i32.add (local.get $pTmp) (local.get $row)) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $t (v128.load64_splat (local.get $pKy)))
        (local.set $s0 (f64x2.mul (local.get $t) (v128.load offset=0 (local.get $c))))
        (local.set $s1 (f64x2.mul (local.get $t) (v128.load offset=16 (local.get $c))))
        (local.set $s2 (f64x2.mul (local.get $t) (v128.load offset=32 (local.get $c))))
        (local.set $s3 (f64x2.mul (local.get $t) (v128.load offset=48 (local.get $c))))
        (local.set $pa (i32.sub (local.get $c) (local.get $strideB)))
        (local.set $pb (i32.add (local.get $c) (local.get $strideB)))
        (local.set $pk (i32.add (local.get $pKy) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $ctaps4 (loop $ctap4
          (br_if $ctaps4 (i32.gt_u (local.get $d) (local.get $ly)))
          (local.set $t (v128.load64_splat (local.get $pk)))
          (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=0 (local.get $pa)) (v128.load offset=0 (local.get $pb))))))
          (local.set $s1 (f64x2.add (local.get $s1) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=16 (local.get $pa)) (v128.load offset=16 (local.get $pb))))))
          (local.set $s2 (f64x2.add (local.get $s2) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=32 (local.get $pa)) (v128.load offset=32 (local.get $pb))))))
          (local.set $s3 (f64x2.add (local.get $s3) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=48 (local.get $pa)) (v128.load offset=48 (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (local.get $strideB)))
          (local.set $pb (i32.add (local.get $pb) (local.get $strideB)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $ctap4)))
        (local.set $pc (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $j) (local.get $so)) (local.get $i)) (i32.const 3))))
        (v128.store offset=0 (local.get $pc) (local.get $s0))
        (local.set $sum (f64x2.add (local.get $sum) (local.get $s0)))
        (local.set $max (f64x2.max (local.get $max) (local.get $s0)))
        (v128.store offset=16 (local.get $pc) (local.get $s1))
        (local.set $sum (f64x2.add (local.get $sum) (local.get $s1)))
        (local.set $max (f64x2.max (local.get $max) (local.get $s1)))
        (v128.store offset=32 (local.get $pc) (local.get $s2))
        (local.set $sum (f64x2.add (local.get $sum) (local.get $s2)))
        (local.set $max (f64x2.max (local.get $max) (local.get $s2)))
        (v128.store offset=48 (local.get $pc) (local.get $s3))
        (local.set $sum (f64x2.add (local.get $sum) (local.get $s3)))
        (local.set $max (f64x2.max (local.get $max) (local.get $s3)))
        (local.set $i (i32.add (local.get $i) (i32.const 8)))
        (br $cquad)))
      (block $cols2 (loop $col2
        (br_if $cols2 (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $c (i32.add (i32.add (local.get $pTmp) (local.get $row)) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $t (v128.load64_splat (local.get $pKy)))
        (local.set $s0 (f64x2.mul (local.get $t) (v128.load offset=0 (local.get $c))))
        (local.set $pa (i32.sub (local.get $c) (local.get $strideB)))
        (local.set $pb (i32.add (local.get $c) (local.get $strideB)))
        (local.set $pk (i32.add (local.get $pKy) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $ctaps1 (loop $ctap1
          (br_if $ctaps1 (i32.gt_u (local.get $d) (local.get $ly)))
          (local.set $t (v128.load64_splat (local.get $pk)))
          (local.set $s0 (f64x2.add (local.get $s0) (f64x2.mul (local.get $t) (f64x2.add (v128.load offset=0 (local.get $pa)) (v128.load offset=0 (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (local.get $strideB)))
          (local.set $pb (i32.add (local.get $pb) (local.get $strideB)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $ctap1)))
        (local.set $pc (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $j) (local.get $so)) (local.get $i)) (i32.const 3))))
        (v128.store offset=0 (local.get $pc) (local.get $s0))
        (local.set $sum (f64x2.add (local.get $sum) (local.get $s0)))
        (local.set $max (f64x2.max (local.get $max) (local.get $s0)))
        (local.set $i (i32.add (local.get $i) (i32.const 2)))
        (br $col2)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl2)))
    ;; the sum (two lanes added) and the largest value of the output
    (f64.store (local.get $pStats) (f64.add (f64x2.extract_lane 0 (local.get $sum)) (f64x2.extract_lane 1 (local.get $sum))))
    (f64.store offset=8 (local.get $pStats) (f64.max (f64x2.extract_lane 0 (local.get $max)) (f64x2.extract_lane 1 (local.get $max)))))

  ;; Sorting of weighted draws by value (sortDraws in summary.ts): the draws with a positive
  ;; weight and a value that is not NaN, from x[0 .. n - 1] and w[0 .. n - 1], into ox and ow
  ;; sorted by the order-preserving bit pattern of each value (so -0 before +0, and equal values
  ;; in their original order); returns their number m, and their total weight (summed in the
  ;; original order) at total. A stable counting sort into m buckets of equal width between the
  ;; smallest and the largest value (monotone in the value), then an insertion pass on the 64-bit
  ;; patterns, which only moves draws within a bucket. Returns -1 instead when that pass would
  ;; move more than 16 m entries (values crowded into few buckets: the caller sorts another way).
  ;; Work (bytes from pWork): 20 n + 4 (n + 1).
  (func $key64 (param $x f64) (result i64)
    (local $b i64)
    (local.set $b (i64.reinterpret_f64 (local.get $x)))
    (if (result i64) (i64.lt_s (local.get $b) (i64.const 0))
      (then (i64.xor (local.get $b) (i64.const -1)))
      (else (i64.or (local.get $b) (i64.const 0x8000000000000000)))))
  (func (export "sortDraws")
    (param $pX i32) (param $pW i32) (param $n i32) (param $pOX i32) (param $pOW i32) (param $pWork i32) (param $pTotal i32)
    (result i32)
    (local $i i32) (local $m i32) (local $x f64) (local $w f64) (local $total f64)
    (local $pIdx i32) (local $pBkt i32) (local $pOrd i32) (local $pKey i32) (local $pCnt i32)
    (local $lo f64) (local $hi f64) (local $scale f64) (local $bk i32) (local $p i32) (local $sum i32) (local $t i32)
    (local $j i32) (local $key i64) (local $idx i32) (local $budget i32) (local $top i32)
    ;; work: kept indices (4 n), their buckets (4 n), sorted order (4 n), 64-bit keys (8 n), counts (4 (n + 1))
    (local.set $pIdx (local.get $pWork))
    (local.set $pBkt (i32.add (local.get $pWork) (i32.shl (local.get $n) (i32.const 2))))
    (local.set $pOrd (i32.add (local.get $pWork) (i32.shl (local.get $n) (i32.const 3))))
    (local.set $pKey (i32.add (local.get $pWork) (i32.mul (local.get $n) (i32.const 12))))
    (local.set $pCnt (i32.add (local.get $pWork) (i32.mul (local.get $n) (i32.const 20))))
    (local.set $lo (f64.const inf))
    (local.set $hi (f64.const -inf))
    ;; keep positive weights and non-NaN values; their range and total weight
    (block $kept (loop $keep
      (br_if $kept (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $x (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))))
      (if (i32.and (f64.gt (local.get $w) (f64.const 0)) (f64.eq (local.get $x) (local.get $x)))
        (then
          (i32.store (i32.add (local.get $pIdx) (i32.shl (local.get $m) (i32.const 2))) (local.get $i))
          (local.set $total (f64.add (local.get $total) (local.get $w)))
          (local.set $lo (f64.min (local.get $lo) (local.get $x)))
          (local.set $hi (f64.max (local.get $hi) (local.get $x)))
          (local.set $m (i32.add (local.get $m) (i32.const 1)))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $keep)))
    (f64.store (local.get $pTotal) (local.get $total))
    (if (i32.eqz (local.get $m)) (then (return (i32.const 0))))
    ;; buckets: floor((x - lo) m / (hi - lo)), the largest value in the last
    (local.set $top (i32.sub (local.get $m) (i32.const 1)))
    (local.set $scale (f64.div (f64.convert_i32_u (local.get $m)) (f64.sub (local.get $hi) (local.get $lo))))
    (memory.fill (local.get $pCnt) (i32.const 0) (i32.shl (i32.add (local.get $m) (i32.const 1)) (i32.const 2)))
    (local.set $i (i32.const 0))
    (block $bucketed (loop $bucket
      (br_if $bucketed (i32.ge_u (local.get $i) (local.get $m)))
      (local.set $x (f64.load (i32.add (local.get $pX)
        (i32.shl (i32.load (i32.add (local.get $pIdx) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 3)))))
      ;; (a zero range, or an infinite one, puts every draw in bucket 0)
      (local.set $bk (i32.trunc_sat_f64_u (f64.mul (f64.sub (local.get $x) (local.get $lo)) (local.get $scale))))
      (if (i32.gt_u (local.get $bk) (local.get $top)) (then (local.set $bk (local.get $top))))
      (if (f64.ne (local.get $scale) (local.get $scale)) (then (local.set $bk (i32.const 0))))
      (i32.store (i32.add (local.get $pBkt) (i32.shl (local.get $i) (i32.const 2))) (local.get $bk))
      (local.set $p (i32.add (local.get $pCnt) (i32.shl (local.get $bk) (i32.const 2))))
      (i32.store (local.get $p) (i32.add (i32.load (local.get $p)) (i32.const 1)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $bucket)))
    ;; counts to starting positions
    (local.set $i (i32.const 0))
    (block $pref (loop $prefix
      (br_if $pref (i32.ge_u (local.get $i) (local.get $m)))
      (local.set $p (i32.add (local.get $pCnt) (i32.shl (local.get $i) (i32.const 2))))
      (local.set $t (i32.load (local.get $p)))
      (i32.store (local.get $p) (local.get $sum))
      (local.set $sum (i32.add (local.get $sum) (local.get $t)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $prefix)))
    ;; stable scatter of the kept indices by bucket
    (local.set $i (i32.const 0))
    (block $scat (loop $scatter
      (br_if $scat (i32.ge_u (local.get $i) (local.get $m)))
      (local.set $p (i32.add (local.get $pCnt) (i32.shl (i32.load (i32.add (local.get $pBkt) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 2))))
      (local.set $t (i32.load (local.get $p)))
      (i32.store (local.get $p) (i32.add (local.get $t) (i32.const 1)))
      (i32.store (i32.add (local.get $pOrd) (i32.shl (local.get $t) (i32.const 2)))
        (i32.load (i32.add (local.get $pIdx) (i32.shl (local.get $i) (i32.const 2)))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $scatter)))
    ;; 64-bit keys in that order
    (local.set $i (i32.const 0))
    (block $keyed (loop $keys
      (br_if $keyed (i32.ge_u (local.get $i) (local.get $m)))
      (i64.store (i32.add (local.get $pKey) (i32.shl (local.get $i) (i32.const 3)))
        (call $key64 (f64.load (i32.add (local.get $pX)
          (i32.shl (i32.load (i32.add (local.get $pOrd) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 3))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $keys)))
    ;; insertion pass on the keys (stable), within the budget
    (local.set $budget (i32.shl (local.get $m) (i32.const 4)))
    (local.set $i (i32.const 1))
    (block $ins (loop $insert
      (br_if $ins (i32.ge_u (local.get $i) (local.get $m)))
      (local.set $key (i64.load (i32.add (local.get $pKey) (i32.shl (local.get $i) (i32.const 3)))))
      (if (i64.gt_u (i64.load (i32.add (local.get $pKey) (i32.shl (i32.sub (local.get $i) (i32.const 1)) (i32.const 3)))) (local.get $key))
        (then
          (local.set $idx (i32.load (i32.add (local.get $pOrd) (i32.shl (local.get $i) (i32.const 2)))))
          (local.set $j (i32.sub (local.get $i) (i32.const 1)))
          (block $placed (loop $down
            (br_if $placed (i32.lt_s (local.get $j) (i32.const 0)))
            (br_if $placed (i64.le_u (i64.load (i32.add (local.get $pKey) (i32.shl (local.get $j) (i32.const 3)))) (local.get $key)))
            (i64.store (i32.add (local.get $pKey) (i32.shl (i32.add (local.get $j) (i32.const 1)) (i32.const 3)))
              (i64.load (i32.add (local.get $pKey) (i32.shl (local.get $j) (i32.const 3)))))
            (i32.store (i32.add (local.get $pOrd) (i32.shl (i32.add (local.get $j) (i32.const 1)) (i32.const 2)))
              (i32.load (i32.add (local.get $pOrd) (i32.shl (local.get $j) (i32.const 2)))))
            (local.set $budget (i32.sub (local.get $budget) (i32.const 1)))
            (if (i32.lt_s (local.get $budget) (i32.const 0)) (then (return (i32.const -1))))
            (local.set $j (i32.sub (local.get $j) (i32.const 1)))
            (br $down)))
          (i64.store (i32.add (local.get $pKey) (i32.shl (i32.add (local.get $j) (i32.const 1)) (i32.const 3))) (local.get $key))
          (i32.store (i32.add (local.get $pOrd) (i32.shl (i32.add (local.get $j) (i32.const 1)) (i32.const 2))) (local.get $idx))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $insert)))
    ;; gather values and weights in sorted order
    (local.set $i (i32.const 0))
    (block $gathered (loop $gather
      (br_if $gathered (i32.ge_u (local.get $i) (local.get $m)))
      (local.set $idx (i32.shl (i32.load (i32.add (local.get $pOrd) (i32.shl (local.get $i) (i32.const 2)))) (i32.const 3)))
      (f64.store (i32.add (local.get $pOX) (i32.shl (local.get $i) (i32.const 3))) (f64.load (i32.add (local.get $pX) (local.get $idx))))
      (f64.store (i32.add (local.get $pOW) (i32.shl (local.get $i) (i32.const 3))) (f64.load (i32.add (local.get $pW) (local.get $idx))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $gather)))
    (local.get $m))

  ;; Summary of sorted draws x[0 .. n - 1] with weights w (summariseSorted, quantilesSorted,
  ;; hdiSorted and kishEss in summary.ts and weights.ts, the same operations in the same order),
  ;; total the sum of the weights. Writes to out: mean, standard deviation (sums in sorted order,
  ;; over total), the quantiles at the K ascending probabilities probs[0 .. K - 1] (midpoint
  ;; rule), the shortest intervals holding weight need68 and need95 (lo, hi each), and the Kish
  ;; ESS of w. n >= 1.
  (func (export "summarySorted")
    (param $pX i32) (param $pW i32) (param $n i32) (param $total f64) (param $pProbs i32) (param $K i32)
    (param $need68 f64) (param $need95 f64) (param $pOut i32)
    (local $i i32) (local $q i32) (local $swx f64) (local $mean f64) (local $ss f64) (local $d f64)
    (local $x f64) (local $w f64) (local $posPrev f64) (local $pos f64) (local $cPrev f64) (local $target f64)
    (local $f f64) (local $pq i32) (local $max f64) (local $inv f64) (local $s f64) (local $s2 f64) (local $v f64)
    ;; mean and standard deviation
    (local.set $i (i32.const 0))
    (block $m1 (loop $l1
      (br_if $m1 (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $swx (f64.add (local.get $swx)
        (f64.mul (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3))))
                 (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $l1)))
    (local.set $mean (f64.div (local.get $swx) (local.get $total)))
    (local.set $i (i32.const 0))
    (block $m2 (loop $l2
      (br_if $m2 (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $d (f64.sub (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))) (local.get $mean)))
      (local.set $ss (f64.add (local.get $ss)
        (f64.mul (f64.mul (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))) (local.get $d)) (local.get $d))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $l2)))
    (f64.store (local.get $pOut) (local.get $mean))
    (f64.store offset=8 (local.get $pOut) (f64.sqrt (f64.div (local.get $ss) (local.get $total))))
    ;; quantiles in one walk
    (local.set $pq (i32.add (local.get $pOut) (i32.const 16)))
    (local.set $posPrev (f64.mul (f64.const 0.5) (f64.load (local.get $pW))))
    (block $first (loop $lf
      (br_if $first (i32.ge_u (local.get $q) (local.get $K)))
      (br_if $first (i32.eqz (f64.le
        (f64.mul (f64.load (i32.add (local.get $pProbs) (i32.shl (local.get $q) (i32.const 3)))) (local.get $total))
        (local.get $posPrev))))
      (f64.store (i32.add (local.get $pq) (i32.shl (local.get $q) (i32.const 3))) (f64.load (local.get $pX)))
      (local.set $q (i32.add (local.get $q) (i32.const 1)))
      (br $lf)))
    (local.set $cPrev (f64.load (local.get $pW)))
    (local.set $i (i32.const 1))
    (block $walked (loop $walk
      (br_if $walked (i32.or (i32.ge_u (local.get $i) (local.get $n)) (i32.ge_u (local.get $q) (local.get $K))))
      (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $pos (f64.add (local.get $cPrev) (f64.mul (f64.const 0.5) (local.get $w))))
      (block $done (loop $hit
        (br_if $done (i32.ge_u (local.get $q) (local.get $K)))
        (local.set $target (f64.mul (f64.load (i32.add (local.get $pProbs) (i32.shl (local.get $q) (i32.const 3)))) (local.get $total)))
        (br_if $done (i32.eqz (f64.le (local.get $target) (local.get $pos))))
        (local.set $f (f64.div (f64.sub (local.get $target) (local.get $posPrev)) (f64.sub (local.get $pos) (local.get $posPrev))))
        (local.set $x (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $i) (i32.const 1)) (i32.const 3)))))
        (f64.store (i32.add (local.get $pq) (i32.shl (local.get $q) (i32.const 3)))
          (f64.add (local.get $x)
            (f64.mul (local.get $f) (f64.sub (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))) (local.get $x)))))
        (local.set $q (i32.add (local.get $q) (i32.const 1)))
        (br $hit)))
      (local.set $posPrev (local.get $pos))
      (local.set $cPrev (f64.add (local.get $cPrev) (local.get $w)))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $walk)))
    (local.set $x (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $n) (i32.const 1)) (i32.const 3)))))
    (block $rest (loop $lr
      (br_if $rest (i32.ge_u (local.get $q) (local.get $K)))
      (f64.store (i32.add (local.get $pq) (i32.shl (local.get $q) (i32.const 3))) (local.get $x))
      (local.set $q (i32.add (local.get $q) (i32.const 1)))
      (br $lr)))
    ;; highest-density intervals, both levels in one pass
    (call $hdi2 (local.get $pX) (local.get $pW) (local.get $n) (local.get $need68) (local.get $need95)
      (i32.add (local.get $pq) (i32.shl (local.get $K) (i32.const 3))))
    ;; Kish ESS of the sorted weights
    (local.set $max (f64.const 0))
    (local.set $i (i32.const 0))
    (block $k1 (loop $lk1
      (br_if $k1 (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
      (if (f64.gt (local.get $w) (local.get $max)) (then (local.set $max (local.get $w))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $lk1)))
    (if (f64.gt (local.get $max) (f64.const 0))
      (then
        (local.set $inv (f64.div (f64.const 1) (local.get $max)))
        (local.set $i (i32.const 0))
        (block $k2 (loop $lk2
          (br_if $k2 (i32.ge_u (local.get $i) (local.get $n)))
          (local.set $v (f64.mul (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))) (local.get $inv)))
          (local.set $s (f64.add (local.get $s) (local.get $v)))
          (local.set $s2 (f64.add (local.get $s2) (f64.mul (local.get $v) (local.get $v))))
          (local.set $i (i32.add (local.get $i) (i32.const 1)))
          (br $lk2)))
        (f64.store (i32.add (local.get $pq) (i32.shl (i32.add (local.get $K) (i32.const 4)) (i32.const 3)))
          (f64.div (f64.mul (local.get $s) (local.get $s)) (local.get $s2))))
      (else
        (f64.store (i32.add (local.get $pq) (i32.shl (i32.add (local.get $K) (i32.const 4)) (i32.const 3))) (f64.const 0)))))

  ;; hdiSorted at two levels: for each, the shortest [x_i, x_{j-1}] whose weight reaches its
  ;; need, written at out (lo, hi of the first, then of the second). The two windows slide in
  ;; the same loop over i (independent sums, so their additions overlap); each does exactly the
  ;; steps of hdiSorted. A window that can no longer reach its need stops; the loop ends when
  ;; both have stopped.
  (func $hdi2 (param $pX i32) (param $pW i32) (param $n i32) (param $needA f64) (param $needB f64) (param $out i32)
    (local $i i32) (local $ja i32) (local $jb i32) (local $ma f64) (local $mb f64) (local $width f64) (local $xi f64) (local $wi f64)
    (local $bestA f64) (local $loA f64) (local $hiA f64) (local $bestB f64) (local $loB f64) (local $hiB f64)
    (local $liveA i32) (local $liveB i32)
    (local.set $loA (f64.load (local.get $pX)))
    (local.set $hiA (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $n) (i32.const 1)) (i32.const 3)))))
    (local.set $loB (local.get $loA))
    (local.set $hiB (local.get $hiA))
    (local.set $bestA (f64.const inf))
    (local.set $bestB (f64.const inf))
    (local.set $liveA (i32.const 1))
    (local.set $liveB (i32.const 1))
    (block $end (loop $start
      (br_if $end (i32.ge_u (local.get $i) (local.get $n)))
      (br_if $end (i32.eqz (i32.or (local.get $liveA) (local.get $liveB))))
      (local.set $xi (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))))
      (local.set $wi (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
      (if (local.get $liveA)
        (then
          (block $enoughA (loop $growA
            (br_if $enoughA (i32.ge_u (local.get $ja) (local.get $n)))
            (br_if $enoughA (i32.eqz (f64.lt (local.get $ma) (local.get $needA))))
            (local.set $ma (f64.add (local.get $ma) (f64.load (i32.add (local.get $pW) (i32.shl (local.get $ja) (i32.const 3))))))
            (local.set $ja (i32.add (local.get $ja) (i32.const 1)))
            (br $growA)))
          (if (f64.lt (local.get $ma) (local.get $needA))
            (then (local.set $liveA (i32.const 0)))
            (else
              (local.set $width (f64.sub (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $ja) (i32.const 1)) (i32.const 3)))) (local.get $xi)))
              (if (f64.lt (local.get $width) (local.get $bestA))
                (then
                  (local.set $bestA (local.get $width))
                  (local.set $loA (local.get $xi))
                  (local.set $hiA (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $ja) (i32.const 1)) (i32.const 3)))))))
              (local.set $ma (f64.sub (local.get $ma) (local.get $wi)))))))
      (if (local.get $liveB)
        (then
          (block $enoughB (loop $growB
            (br_if $enoughB (i32.ge_u (local.get $jb) (local.get $n)))
            (br_if $enoughB (i32.eqz (f64.lt (local.get $mb) (local.get $needB))))
            (local.set $mb (f64.add (local.get $mb) (f64.load (i32.add (local.get $pW) (i32.shl (local.get $jb) (i32.const 3))))))
            (local.set $jb (i32.add (local.get $jb) (i32.const 1)))
            (br $growB)))
          (if (f64.lt (local.get $mb) (local.get $needB))
            (then (local.set $liveB (i32.const 0)))
            (else
              (local.set $width (f64.sub (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $jb) (i32.const 1)) (i32.const 3)))) (local.get $xi)))
              (if (f64.lt (local.get $width) (local.get $bestB))
                (then
                  (local.set $bestB (local.get $width))
                  (local.set $loB (local.get $xi))
                  (local.set $hiB (f64.load (i32.add (local.get $pX) (i32.shl (i32.sub (local.get $jb) (i32.const 1)) (i32.const 3)))))))
              (local.set $mb (f64.sub (local.get $mb) (local.get $wi)))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $start)))
    (f64.store (local.get $out) (local.get $loA))
    (f64.store offset=8 (local.get $out) (local.get $hiA))
    (f64.store offset=16 (local.get $out) (local.get $loB))
    (f64.store offset=24 (local.get $out) (local.get $hiB)))

  ;; Linear binning of the positive-weight draws onto a mesh of M nodes (binnedKdeUniform in
  ;; density.ts): node position (x - origin) inv, split between the two nodes around it; draws
  ;; beyond the mesh are left out. The mesh must be zero before. Returns the total weight.
  (func (export "binLinear1d")
    (param $pX i32) (param $pW i32) (param $n i32) (param $origin f64) (param $inv f64) (param $M i32) (param $pMesh i32)
    (result f64)
    (local $i i32) (local $w f64) (local $pos f64) (local $fl f64) (local $f f64) (local $total f64) (local $pj i32) (local $top f64)
    (local.set $top (f64.convert_i32_s (i32.sub (local.get $M) (i32.const 1))))
    (block $done (loop $draw
      (br_if $done (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
      (if (f64.gt (local.get $w) (f64.const 0))
        (then
          (local.set $total (f64.add (local.get $total) (local.get $w)))
          (local.set $pos (f64.mul (f64.sub (f64.load (i32.add (local.get $pX) (i32.shl (local.get $i) (i32.const 3)))) (local.get $origin)) (local.get $inv)))
          (if (i32.and (f64.ge (local.get $pos) (f64.const 0)) (f64.lt (local.get $pos) (local.get $top)))
            (then
              (local.set $fl (f64.floor (local.get $pos)))
              (local.set $f (f64.sub (local.get $pos) (local.get $fl)))
              (local.set $pj (i32.add (local.get $pMesh) (i32.shl (i32.trunc_f64_s (local.get $fl)) (i32.const 3))))
              (f64.store (local.get $pj) (f64.add (f64.load (local.get $pj)) (f64.mul (local.get $w) (f64.sub (f64.const 1) (local.get $f)))))
              (f64.store offset=8 (local.get $pj) (f64.add (f64.load offset=8 (local.get $pj)) (f64.mul (local.get $w) (local.get $f))))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $draw)))
    (local.get $total))

  ;; The covariance's inputs (weightedCovariance in summary.ts): for each of the k columns
  ;; x[a n .. a n + n - 1], its mean over positive weights sum(w x) / sum(w), then
  ;; u[i kk + a] = x_ai - m_a and t[a n + i] = w_i u[i kk + a]; returns sum(w) over every draw.
  (func (export "covarianceTerms")
    (param $pW i32) (param $pX i32) (param $n i32) (param $k i32) (param $kk i32) (param $pT i32) (param $pU i32)
    (result f64)
    (local $a i32) (local $i i32) (local $w f64) (local $sw f64) (local $swa f64) (local $swx f64) (local $mean f64) (local $d f64) (local $px i32)
    (block $s1 (loop $ls
      (br_if $s1 (i32.ge_u (local.get $i) (local.get $n)))
      (local.set $sw (f64.add (local.get $sw) (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3))))))
      (local.set $i (i32.add (local.get $i) (i32.const 1)))
      (br $ls)))
    (block $cols (loop $col
      (br_if $cols (i32.ge_u (local.get $a) (local.get $k)))
      (local.set $px (i32.add (local.get $pX) (i32.shl (i32.mul (local.get $a) (local.get $n)) (i32.const 3))))
      (local.set $swa (f64.const 0))
      (local.set $swx (f64.const 0))
      (local.set $i (i32.const 0))
      (block $m (loop $lm
        (br_if $m (i32.ge_u (local.get $i) (local.get $n)))
        (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))))
        (if (f64.ne (local.get $w) (f64.const 0))
          (then
            (local.set $swa (f64.add (local.get $swa) (local.get $w)))
            (local.set $swx (f64.add (local.get $swx) (f64.mul (local.get $w) (f64.load (i32.add (local.get $px) (i32.shl (local.get $i) (i32.const 3)))))))))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $lm)))
      (local.set $mean (f64.div (local.get $swx) (local.get $swa)))
      (local.set $i (i32.const 0))
      (block $t (loop $lt
        (br_if $t (i32.ge_u (local.get $i) (local.get $n)))
        (local.set $d (f64.sub (f64.load (i32.add (local.get $px) (i32.shl (local.get $i) (i32.const 3)))) (local.get $mean)))
        (f64.store (i32.add (local.get $pU) (i32.shl (i32.add (i32.mul (local.get $i) (local.get $kk)) (local.get $a)) (i32.const 3))) (local.get $d))
        (f64.store (i32.add (local.get $pT) (i32.shl (i32.add (i32.mul (local.get $a) (local.get $n)) (local.get $i)) (i32.const 3)))
          (f64.mul (f64.load (i32.add (local.get $pW) (i32.shl (local.get $i) (i32.const 3)))) (local.get $d)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $lt)))
      (local.set $a (i32.add (local.get $a) (i32.const 1)))
      (br $col)))
    ;; the padding column of u (k odd) is zero
    (if (i32.gt_u (local.get $kk) (local.get $k))
      (then
        (local.set $i (i32.const 0))
        (block $z (loop $lz
          (br_if $z (i32.ge_u (local.get $i) (local.get $n)))
          (f64.store (i32.add (local.get $pU) (i32.shl (i32.add (i32.mul (local.get $i) (local.get $kk)) (local.get $k)) (i32.const 3))) (f64.const 0))
          (local.set $i (i32.add (local.get $i) (i32.const 1)))
          (br $lz)))))
    (local.get $sw))

  ;; Credible levels of a grid (creditLevels in density.ts, its buckets): cell values at
  ;; z + (j stride + i) 8 for i < nx, j < ny. levelBuckets puts each positive value v in bucket
  ;; min(B - 1, trunc(v scale)) (stored per cell at pBkt, -1 for v <= 0) and adds v to its
  ;; bucket's mass (pMass, B float64, zero before), through runs of neighbouring cells in one bucket.
  (func (export "levelBuckets")
    (param $pZ i32) (param $stride i32) (param $nx i32) (param $ny i32) (param $scale f64) (param $B i32) (param $pMass i32) (param $pBkt i32)
    (local $i i32) (local $j i32) (local $v f64) (local $b i32) (local $pm i32) (local $row i32) (local $c i32) (local $cur i32) (local $run f64)
    ;; neighbouring cells mostly share a bucket: their values are summed in a run, added to the bucket when it changes
    (local.set $cur (i32.const -1))
    (block $rows (loop $rowl
      (br_if $rows (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $row (i32.add (local.get $pZ) (i32.shl (i32.mul (local.get $j) (local.get $stride)) (i32.const 3))))
      (local.set $i (i32.const 0))
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $v (f64.load (i32.add (local.get $row) (i32.shl (local.get $i) (i32.const 3)))))
        (if (f64.gt (local.get $v) (f64.const 0))
          (then
            (local.set $b (i32.trunc_sat_f64_u (f64.mul (local.get $v) (local.get $scale))))
            (if (i32.ge_u (local.get $b) (local.get $B)) (then (local.set $b (i32.sub (local.get $B) (i32.const 1)))))
            (if (i32.ne (local.get $b) (local.get $cur))
              (then
                (if (i32.ge_s (local.get $cur) (i32.const 0))
                  (then
                    (local.set $pm (i32.add (local.get $pMass) (i32.shl (local.get $cur) (i32.const 3))))
                    (f64.store (local.get $pm) (f64.add (f64.load (local.get $pm)) (local.get $run)))))
                (local.set $cur (local.get $b))
                (local.set $run (f64.const 0))))
            (local.set $run (f64.add (local.get $run) (local.get $v))))
          (else (local.set $b (i32.const -1))))
        (i32.store (i32.add (local.get $pBkt) (i32.shl (local.get $c) (i32.const 2))) (local.get $b))
        (local.set $c (i32.add (local.get $c) (i32.const 1)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $col)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl)))
    (if (i32.ge_s (local.get $cur) (i32.const 0))
      (then
        (local.set $pm (i32.add (local.get $pMass) (i32.shl (local.get $cur) (i32.const 3))))
        (f64.store (local.get $pm) (f64.add (f64.load (local.get $pm)) (local.get $run))))))

  ;; The values of the cells in bucket b1 (to pOut1) and in bucket b2 (to pOut2), counts at
  ;; pCount (two i32); and the box of the cells in buckets >= bMin (i0, i1, j0, j1 as i32 at pBox;
  ;; i1 = -1 when there are none).
  (func (export "levelCells")
    (param $pZ i32) (param $stride i32) (param $nx i32) (param $ny i32) (param $pBkt i32) (param $b1 i32) (param $b2 i32) (param $bMin i32)
    (param $pOut1 i32) (param $pOut2 i32) (param $pCount i32) (param $pBox i32)
    (local $i i32) (local $j i32) (local $b i32) (local $c i32) (local $n1 i32) (local $n2 i32) (local $v f64)
    (local $i0 i32) (local $i1 i32) (local $j0 i32) (local $j1 i32)
    (local.set $i0 (local.get $nx))
    (local.set $i1 (i32.const -1))
    (local.set $j0 (local.get $ny))
    (local.set $j1 (i32.const -1))
    (block $rows (loop $rowl
      (br_if $rows (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $i (i32.const 0))
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $b (i32.load (i32.add (local.get $pBkt) (i32.shl (local.get $c) (i32.const 2)))))
        (if (i32.ge_s (local.get $b) (local.get $bMin))
          (then
            (if (i32.lt_s (local.get $i) (local.get $i0)) (then (local.set $i0 (local.get $i))))
            (if (i32.gt_s (local.get $i) (local.get $i1)) (then (local.set $i1 (local.get $i))))
            (if (i32.lt_s (local.get $j) (local.get $j0)) (then (local.set $j0 (local.get $j))))
            (if (i32.gt_s (local.get $j) (local.get $j1)) (then (local.set $j1 (local.get $j))))
            (if (i32.or (i32.eq (local.get $b) (local.get $b1)) (i32.eq (local.get $b) (local.get $b2)))
              (then
                (local.set $v (f64.load (i32.add (local.get $pZ)
                  (i32.shl (i32.add (i32.mul (local.get $j) (local.get $stride)) (local.get $i)) (i32.const 3)))))
                (if (i32.eq (local.get $b) (local.get $b1))
                  (then
                    (f64.store (i32.add (local.get $pOut1) (i32.shl (local.get $n1) (i32.const 3))) (local.get $v))
                    (local.set $n1 (i32.add (local.get $n1) (i32.const 1)))))
                (if (i32.eq (local.get $b) (local.get $b2))
                  (then
                    (f64.store (i32.add (local.get $pOut2) (i32.shl (local.get $n2) (i32.const 3))) (local.get $v))
                    (local.set $n2 (i32.add (local.get $n2) (i32.const 1)))))))))
        (local.set $c (i32.add (local.get $c) (i32.const 1)))
        (local.set $i (i32.add (local.get $i) (i32.const 1)))
        (br $col)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl)))
    (i32.store (local.get $pCount) (local.get $n1))
    (i32.store offset=4 (local.get $pCount) (local.get $n2))
    (i32.store (local.get $pBox) (local.get $i0))
    (i32.store offset=4 (local.get $pBox) (local.get $i1))
    (i32.store offset=8 (local.get $pBox) (local.get $j0))
    (i32.store offset=12 (local.get $pBox) (local.get $j1)))

  ;; Linear binning of draws onto a 2-D grid (binLinear in density.ts): per draw k with w > 0 and
  ;; both cells >= 0, at c = origin + (cy stride + cx) 8 bytes, the four weights
  ;; w (1 - fy)(1 - fx), w (1 - fy) fx, w fy (1 - fx), w fy fx at c, c + 8, c + stride, c + stride + 8.
  ;; cx, cy i32 per draw; fx, fy, w float64.
  (func (export "binLinear2d")
    (param $pCx i32) (param $pFx i32) (param $pCy i32) (param $pFy i32) (param $pW i32) (param $n i32) (param $pOrigin i32) (param $stride i32)
    (local $k i32) (local $w f64) (local $i i32) (local $j i32) (local $gx f64) (local $gy f64) (local $a f64) (local $b f64) (local $c i32) (local $sb i32)
    (local.set $sb (i32.shl (local.get $stride) (i32.const 3)))
    (block $done (loop $draw
      (br_if $done (i32.ge_u (local.get $k) (local.get $n)))
      (local.set $w (f64.load (i32.add (local.get $pW) (i32.shl (local.get $k) (i32.const 3)))))
      (local.set $i (i32.load (i32.add (local.get $pCx) (i32.shl (local.get $k) (i32.const 2)))))
      (local.set $j (i32.load (i32.add (local.get $pCy) (i32.shl (local.get $k) (i32.const 2)))))
      (if (i32.and (f64.gt (local.get $w) (f64.const 0)) (i32.ge_s (i32.or (local.get $i) (local.get $j)) (i32.const 0)))
        (then
          (local.set $gx (f64.load (i32.add (local.get $pFx) (i32.shl (local.get $k) (i32.const 3)))))
          (local.set $gy (f64.load (i32.add (local.get $pFy) (i32.shl (local.get $k) (i32.const 3)))))
          (local.set $a (f64.mul (local.get $w) (f64.sub (f64.const 1) (local.get $gy))))
          (local.set $b (f64.mul (local.get $w) (local.get $gy)))
          (local.set $c (i32.add (local.get $pOrigin) (i32.shl (i32.add (i32.mul (local.get $j) (local.get $stride)) (local.get $i)) (i32.const 3))))
          (f64.store (local.get $c) (f64.add (f64.load (local.get $c)) (f64.mul (local.get $a) (f64.sub (f64.const 1) (local.get $gx)))))
          (f64.store offset=8 (local.get $c) (f64.add (f64.load offset=8 (local.get $c)) (f64.mul (local.get $a) (local.get $gx))))
          (local.set $c (i32.add (local.get $c) (local.get $sb)))
          (f64.store (local.get $c) (f64.add (f64.load (local.get $c)) (f64.mul (local.get $b) (f64.sub (f64.const 1) (local.get $gx)))))
          (f64.store offset=8 (local.get $c) (f64.add (f64.load offset=8 (local.get $c)) (f64.mul (local.get $b) (local.get $gx))))))
      (local.set $k (i32.add (local.get $k) (i32.const 1)))
      (br $draw))))

  ;; Marching-squares cell codes (traceContours in density.ts): over the cells with lower-left
  ;; node I = I0 .. I1, J = J0 .. J1 of a node grid of row stride NX (float64 at pV), the code
  ;; bl >= level | br >= level << 1 | tr >= level << 2 | tl >= level << 3 of each cell that is
  ;; neither all outside (0) nor all inside (15), as (node index, code) i32 pairs at pOut, in row
  ;; order. Returns their number.
  (func (export "cellCodes")
    (param $pV i32) (param $NX i32) (param $I0 i32) (param $I1 i32) (param $J0 i32) (param $J1 i32) (param $level f64) (param $pOut i32)
    (result i32)
    (local $I i32) (local $J i32) (local $n0 i32) (local $p i32) (local $code i32) (local $count i32) (local $row i32)
    (local.set $row (i32.shl (local.get $NX) (i32.const 3)))
    (local.set $J (local.get $J0))
    (block $rows (loop $rowl
      (br_if $rows (i32.gt_s (local.get $J) (local.get $J1)))
      (local.set $I (local.get $I0))
      (block $cols (loop $col
        (br_if $cols (i32.gt_s (local.get $I) (local.get $I1)))
        (local.set $n0 (i32.add (i32.mul (local.get $J) (local.get $NX)) (local.get $I)))
        (local.set $p (i32.add (local.get $pV) (i32.shl (local.get $n0) (i32.const 3))))
        (local.set $code (i32.or
          (i32.or (f64.ge (f64.load (local.get $p)) (local.get $level))
                  (i32.shl (f64.ge (f64.load offset=8 (local.get $p)) (local.get $level)) (i32.const 1)))
          (i32.or (i32.shl (f64.ge (f64.load offset=8 (i32.add (local.get $p) (local.get $row))) (local.get $level)) (i32.const 2))
                  (i32.shl (f64.ge (f64.load (i32.add (local.get $p) (local.get $row))) (local.get $level)) (i32.const 3)))))
        (if (i32.and (i32.ne (local.get $code) (i32.const 0)) (i32.ne (local.get $code) (i32.const 15)))
          (then
            (i32.store (i32.add (local.get $pOut) (i32.shl (local.get $count) (i32.const 3))) (local.get $n0))
            (i32.store offset=4 (i32.add (local.get $pOut) (i32.shl (local.get $count) (i32.const 3))) (local.get $code))
            (local.set $count (i32.add (local.get $count) (i32.const 1)))))
        (local.set $I (i32.add (local.get $I) (i32.const 1)))
        (br $col)))
      (local.set $J (i32.add (local.get $J) (i32.const 1)))
      (br $rowl)))
    (local.get $count))
)
