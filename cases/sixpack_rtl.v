// Six-pack carrier counter, as the packer's controls contractor delivered it:
// a Verilog netlist of the same counter as sixpack_d.cnl (en: a bottle drops,
// clr: the line-reset button, full: the sixth bottle drops in this clock).
// Its unused codes 6 and 7 go 6 -> 7 -> 0 where the reference goes 6 -> 7 -> 4.
module sixpack_v (
  input clk,
  input en,
  input clr,
  output full
);
  reg [2:0] q;
  wire last = q == 3'd5;
  assign full = en & last;
  always @(posedge clk)
    if (clr)
      q <= 3'd0;
    else if (en)
      q <= last ? 3'd0 : q + 3'd1;
endmodule
