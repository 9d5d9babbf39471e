// Pressure ADC front end, clocked by the ADC's own clock.
module tg_adc_if (
    input  logic        clk_adc,
    input  logic        rst_n,
    input  logic        adc_ovr,
    input  logic [11:0] adc_data,
    output logic [11:0] sample_q,
    output logic        sample_tgl,
    output logic        ovr_q,
    output logic        ovr_hi_q
);
  always_ff @(posedge clk_adc or negedge rst_n) begin
    if (!rst_n) begin
      sample_q   <= '0;
      sample_tgl <= 1'b0;
      ovr_q      <= 1'b0;
      ovr_hi_q   <= 1'b0;
    end else begin
      sample_q   <= adc_data;
      sample_tgl <= ~sample_tgl;     // toggles once per sample
      ovr_q      <= adc_ovr;
      ovr_hi_q   <= adc_ovr & adc_data[11];
    end
  end
endmodule
