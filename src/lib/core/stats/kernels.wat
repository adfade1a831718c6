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
    (local.set $k0 (f64.load (local.get $pKer)))
    (local.set $rb (i32.shl (local.get $r) (i32.const 3)))
    (local.set $g (i32.const 0))
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
  ;; (row stride kk, the padding column zero). Lanes hold b and b + 1.
  (func (export "crossProducts")
    (param $pT i32) (param $pU i32) (param $n i32) (param $k i32) (param $kk i32) (param $pOut i32)
    (local $a i32) (local $b i32) (local $i i32) (local $pt i32) (local $pu i32) (local $s v128)
    (local $strideU i32)
    (local.set $strideU (i32.shl (local.get $kk) (i32.const 3)))
    (local.set $a (i32.const 0))
    (block $rows (loop $row
      (br_if $rows (i32.ge_u (local.get $a) (local.get $k)))
      (local.set $b (i32.and (local.get $a) (i32.const -2)))
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $b) (local.get $kk)))
        (local.set $s (v128.const f64x2 0 0))
        (local.set $pt (i32.add (local.get $pT) (i32.shl (i32.mul (local.get $a) (local.get $n)) (i32.const 3))))
        (local.set $pu (i32.add (local.get $pU) (i32.shl (local.get $b) (i32.const 3))))
        (local.set $i (i32.const 0))
        (block $draws (loop $draw
          (br_if $draws (i32.ge_u (local.get $i) (local.get $n)))
          (local.set $s (f64x2.add (local.get $s)
            (f64x2.mul (v128.load64_splat (local.get $pt)) (v128.load (local.get $pu)))))
          (local.set $pt (i32.add (local.get $pt) (i32.const 8)))
          (local.set $pu (i32.add (local.get $pu) (local.get $strideU)))
          (local.set $i (i32.add (local.get $i) (i32.const 1)))
          (br $draw)))
        (v128.store
          (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $a) (local.get $kk)) (local.get $b)) (i32.const 3)))
          (local.get $s))
        (local.set $b (i32.add (local.get $b) (i32.const 2)))
        (br $col)))
      (local.set $a (i32.add (local.get $a) (i32.const 1)))
      (br $row))))

  ;; Separable smoothing of a grid of ny rows and nx columns (nx even) held with padding:
  ;; row stride sx = nx + 2 Lx (Lx zero columns each side), Ly zero rows above and below. Pass 1
  ;; smooths each row with the symmetric taps kx[0 .. Lx] into tmp (same layout, rows only);
  ;; pass 2 smooths the columns of tmp with ky[0 .. Ly] into out (ny rows of nx, unpadded):
  ;;   v = k[0] c + sum_{d = 1 .. L} k[d] (left_d + right_d).
  ;; tmp's padding rows must be zero; pass 1 writes only its central columns.
  (func (export "smooth2d")
    (param $pIn i32) (param $pTmp i32) (param $pOut i32) (param $nx i32) (param $ny i32)
    (param $pKx i32) (param $lx i32) (param $pKy i32) (param $ly i32)
    (local $sx i32) (local $j i32) (local $i i32) (local $d i32) (local $row i32) (local $c i32)
    (local $pa i32) (local $pb i32) (local $pk i32) (local $s v128) (local $strideB i32)
    (local.set $sx (i32.add (local.get $nx) (i32.shl (local.get $lx) (i32.const 1))))
    (local.set $strideB (i32.shl (local.get $sx) (i32.const 3)))
    ;; pass 1: rows ly .. ly + ny - 1 of the padded grid
    (local.set $j (i32.const 0))
    (block $rows (loop $rowl
      (br_if $rows (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $row (i32.mul (i32.add (local.get $j) (local.get $ly)) (local.get $strideB)))
      (local.set $i (i32.const 0))
      (block $cols (loop $col
        (br_if $cols (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $c (i32.add (local.get $row) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $s (f64x2.mul (v128.load64_splat (local.get $pKx)) (v128.load (i32.add (local.get $pIn) (local.get $c)))))
        (local.set $pa (i32.sub (i32.add (local.get $pIn) (local.get $c)) (i32.const 8)))
        (local.set $pb (i32.add (i32.add (local.get $pIn) (local.get $c)) (i32.const 8)))
        (local.set $pk (i32.add (local.get $pKx) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $taps (loop $tap
          (br_if $taps (i32.gt_u (local.get $d) (local.get $lx)))
          (local.set $s (f64x2.add (local.get $s)
            (f64x2.mul (v128.load64_splat (local.get $pk)) (f64x2.add (v128.load (local.get $pa)) (v128.load (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (i32.const 8)))
          (local.set $pb (i32.add (local.get $pb) (i32.const 8)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $tap)))
        (v128.store (i32.add (local.get $pTmp) (local.get $c)) (local.get $s))
        (local.set $i (i32.add (local.get $i) (i32.const 2)))
        (br $col)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl)))
    ;; pass 2: columns of tmp into out
    (local.set $j (i32.const 0))
    (block $rows2 (loop $rowl2
      (br_if $rows2 (i32.ge_u (local.get $j) (local.get $ny)))
      (local.set $row (i32.mul (i32.add (local.get $j) (local.get $ly)) (local.get $strideB)))
      (local.set $i (i32.const 0))
      (block $cols2 (loop $col2
        (br_if $cols2 (i32.ge_u (local.get $i) (local.get $nx)))
        (local.set $c (i32.add (i32.add (local.get $pTmp) (local.get $row)) (i32.shl (i32.add (local.get $i) (local.get $lx)) (i32.const 3))))
        (local.set $s (f64x2.mul (v128.load64_splat (local.get $pKy)) (v128.load (local.get $c))))
        (local.set $pa (i32.sub (local.get $c) (local.get $strideB)))
        (local.set $pb (i32.add (local.get $c) (local.get $strideB)))
        (local.set $pk (i32.add (local.get $pKy) (i32.const 8)))
        (local.set $d (i32.const 1))
        (block $taps2 (loop $tap2
          (br_if $taps2 (i32.gt_u (local.get $d) (local.get $ly)))
          (local.set $s (f64x2.add (local.get $s)
            (f64x2.mul (v128.load64_splat (local.get $pk)) (f64x2.add (v128.load (local.get $pa)) (v128.load (local.get $pb))))))
          (local.set $pa (i32.sub (local.get $pa) (local.get $strideB)))
          (local.set $pb (i32.add (local.get $pb) (local.get $strideB)))
          (local.set $pk (i32.add (local.get $pk) (i32.const 8)))
          (local.set $d (i32.add (local.get $d) (i32.const 1)))
          (br $tap2)))
        (v128.store
          (i32.add (local.get $pOut) (i32.shl (i32.add (i32.mul (local.get $j) (local.get $nx)) (local.get $i)) (i32.const 3)))
          (local.get $s))
        (local.set $i (i32.add (local.get $i) (i32.const 2)))
        (br $col2)))
      (local.set $j (i32.add (local.get $j) (i32.const 1)))
      (br $rowl2))))
)
